import { readFile } from 'node:fs/promises'
import { beforeAll, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// The shipped example history file (docs/examples/history-import-example.csv) fits the demo plant's register: its dry
// run at Fernhollow Refinery finds no problem (docs/trip-tests.md#history-import).

const ctx = useTestDb({ register: true })
let eng: ApiAgent

beforeAll(async () => {
  ctx.clock.set('2026-06-01T10:00:00Z')
  eng = await signedIn(createApp(ctx), 'engineer')
}, 120_000)

it('checks the example file against the demo plant without problems', async () => {
  const sites = (await eng.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]
  const fhr = sites.find((s) => s.code === 'FHR')!
  const file = await readFile(new URL('../../docs/examples/history-import-example.csv', import.meta.url))
  const res = await eng
    .upload('/api/history-imports', { siteId: fhr.id }, { name: 'history-import-example.csv', content: file })
    .expect(201)
  expect(res.body.errors).toEqual([])
  expect(res.body.summary).toEqual({ tests: 4, commissioning: 1, bypasses: 1, unchanged: 0 })
})
