import pg from 'pg'
import { describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { signedIn } from './helpers/agent.ts'
import { draftChange, buildHeaterTrip } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()

// 21 CFR 11.10(e)/11.70 (as a model): signatures stay linked to their records and cannot be removed or rewritten
describe('signatures and attachments as the runtime role', () => {
  it('cannot be deleted; a signature changes only to be voided, once', async () => {
    const app = createApp(ctx)
    const eng = await signedIn(app, 'engineer')
    const approver = await signedIn(app, 'approver')
    const { site, limit } = await buildHeaterTrip(eng)
    const cr = await draftChange(eng, {
      siteId: site.id,
      title: 'Put in service',
      items: [{ kind: 'create', limitId: limit.id }],
    })
    const pdf = (name: string) => ({ name, content: '%PDF-1.4\n%%EOF\n' })
    await eng.upload(`/api/change-requests/${cr.id}/attachments`, {}, pdf('loop-diagram.pdf')).expect(201)
    await eng.post(`/api/change-requests/${cr.id}/submission`).expect(200)
    await approver.post(`/api/change-requests/${cr.id}/approvals`, { password: 'limitkeeper-demo' }).expect(200)
    // what is signed does not change afterwards: no more attachments once someone has signed
    const late = await eng.upload(`/api/change-requests/${cr.id}/attachments`, {}, pdf('late.pdf')).expect(409)
    expect(late.body.error.code).toBe('INVALID_STATE')

    const client = new pg.Client({ connectionString: ctx.database.appUrl })
    await client.connect()
    try {
      const fail = (q: string) =>
        client.query(q).then(
          () => 'ok',
          (e: { code?: string }) => e.code,
        )
      expect(await fail('DELETE FROM signature')).toBe('42501')
      expect(await fail('TRUNCATE signature')).toBe('42501')
      expect(await fail('DELETE FROM attachment')).toBe('42501')
      expect(await fail("UPDATE attachment SET file_name = 'x.pdf'")).toBe('42501')
      expect(await fail("UPDATE signature SET content_hash = repeat('0', 64)")).toBe('42501')
      expect(await fail('UPDATE signature SET voided_at = NULL')).toBe('42501')
      expect(await fail("UPDATE signature SET voided_at = now(), void_reason = 'test'")).toBe('ok')
      expect(await fail("UPDATE signature SET void_reason = 'again'")).toBe('42501')
    } finally {
      await client.end()
    }
  })
})
