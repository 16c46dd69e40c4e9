import stylistic from '@stylistic/eslint-plugin'
import pluginVue from 'eslint-plugin-vue'
import { defineConfigWithVueTs, vueTsConfigs } from '@vue/eslint-config-typescript'

// Flat config: Vue + TypeScript recommended rules, plus the project's dependency rules (docs/architecture.md).
export default defineConfigWithVueTs(
  { ignores: ['dist/**', 'node_modules/**', '.data/**', 'coverage/**'] },
  pluginVue.configs['flat/essential'],
  vueTsConfigs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      '@typescript-eslint/no-explicit-any': 'off',
      'vue/multi-word-component-names': 'off',
      'vue/valid-v-slot': ['error', { allowModifiers: true }],
    },
  },
  {
    files: ['shared/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            {
              group: ['node:*', 'express', 'vue', 'vue-router', 'pinia', 'vuetify', 'kysely', 'pg'],
              message: 'shared/ is isomorphic: zod, @casl/ability and pure TypeScript only',
            },
            { group: ['**/server/**', '**/src/**', '@/*'], message: 'shared/ must not import from server/ or src/' },
          ],
        },
      ],
    },
  },
  {
    files: ['src/**/*.ts', 'src/**/*.vue'],
    rules: {
      'no-restricted-imports': [
        'error',
        { patterns: [{ group: ['**/server/**', '@server/*'], message: 'the client never imports server code' }] },
      ],
    },
  },
  {
    files: ['server/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        { patterns: [{ group: ['**/src/**', '@/*'], message: 'the server never imports client code' }] },
      ],
    },
  },
  {
    // SQL lives in repositories (docs/architecture.md#request-flow): no Kysely query start or raw `sql` outside them,
    // the database layer (server/db) and the demo seed
    files: ['server/**/*.ts'],
    ignores: ['server/**/*.repository.ts', 'server/db/**', 'server/seed/**'],
    rules: {
      'no-restricted-syntax': [
        'error',
        {
          selector:
            'CallExpression[callee.property.name=/^(selectFrom|selectNoFrom|insertInto|replaceInto|updateTable|deleteFrom|mergeInto)$/]',
          message: 'Kysely queries belong in a <feature>.repository.ts',
        },
        {
          selector: 'TaggedTemplateExpression[tag.name="sql"]',
          message: 'Raw SQL belongs in a <feature>.repository.ts',
        },
      ],
    },
  },
  {
    // No production line over 120 characters (DEVELOPERS.md, "Code style"): Prettier wraps code at 120 but
    // leaves long strings, template text and comments alone. The demo seed's data rows and the frozen migrations aside.
    files: ['src/**/*.ts', 'server/**/*.ts', 'shared/**/*.ts'],
    ignores: ['server/seed/**'],
    plugins: { '@stylistic': stylistic },
    rules: { '@stylistic/max-len': ['error', { code: 120, tabWidth: 2 }] },
  },
  {
    // the same for a component's script and template alike
    files: ['src/**/*.vue'],
    rules: { 'vue/max-len': ['error', { code: 120, template: 120, comments: 120, tabWidth: 2 }] },
  },
  {
    files: ['migrations/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [{ group: ['../*', './*', '@*/*'], message: 'migrations are frozen in time: import only kysely' }],
        },
      ],
    },
  },
)
