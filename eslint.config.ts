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
