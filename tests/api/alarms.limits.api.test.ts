import type { Express } from 'express'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'
import { countRows } from './helpers/factories.ts'

// upload size limit set low for this file (ALARM_UPLOAD_MAX_MB = 0.01, i.e. 10,485 bytes)
const ctx = useTestDb({ env: { ALARM_UPLOAD_MAX_MB: '0.01' } })
let app: Express
let eng: ApiAgent
let siteId: number

beforeAll(async () => {
  app = createApp(ctx, { serveClient: false })
  eng = await signedIn(app, 'engineer')
  const sites = (await eng.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]
  siteId = sites.find((s) => s.code === 'FHR')!.id
})

const rows = (n: number) =>
  [
    'timestamp,tag,event',
    ...Array.from({ length: n }, (_, i) => `2026-07-01 10:00:${String(i % 60).padStart(2, '0')},T-${i},active`),
  ].join('\n')

describe('upload size limits', () => {
  it.each([
    ['/api/alarm-journals', 'journal'],
    ['/api/replays', 'process data'],
  ])('%s refuses a file over the limit with 413 and writes nothing', async (url) => {
    const body = rows(400) // about 12 kB
    expect(Buffer.byteLength(body)).toBeGreaterThan(10_485)
    const r = await eng.upload(url, { siteId, timeZone: 'UTC' }, { name: 'big.csv', content: body }).expect(413)
    expect(r.body.error.message).toMatch(/larger than 0.01 MB/)
    expect([await countRows(ctx.db, 'alarm_journal_upload'), await countRows(ctx.db, 'process_data_upload')]).toEqual([
      0, 0,
    ])
  })
  it('accepts a file just under the limit', async () => {
    const body = rows(300)
    expect(Buffer.byteLength(body)).toBeLessThan(10_485)
    await eng.upload('/api/alarm-journals', { siteId, timeZone: 'UTC' }, { name: 'ok.csv', content: body }).expect(202)
    const deadline = Date.now() + 20_000
    for (;;) {
      const list = (await eng.get(`/api/alarm-journals?siteId=${siteId}`).expect(200)).body
      if (list.items[0]?.status === 'done') {
        expect(list.items[0].rowsStored).toBe(300)
        break
      }
      if (Date.now() > deadline) throw new Error('upload did not finish')
      await new Promise((r) => setTimeout(r, 50))
    }
  })
})
