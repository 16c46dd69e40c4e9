import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { MAX_ATTACHMENT_BYTES } from '../../server/features/attachments/attachments.ts'
import { type ApiAgent, signedIn } from './helpers/agent.ts'
import { draftChange, buildHeaterTrip, rowCounts } from './helpers/factories.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
let eng: ApiAgent
let crId: number

const PDF = Buffer.from('%PDF-1.4\n1 0 obj << /Type /Catalog >> endobj\ntrailer << /Root 1 0 R >>\n%%EOF\n', 'latin1')
// a 1 × 1 pixel PNG
const PNG = Buffer.from(
  'iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAIAAACQd1PeAAAADElEQVR4nGP4z8AAAAMBAQDJ/pLvAAAAAElFTkSuQmCC',
  'base64',
)

beforeAll(async () => {
  eng = await signedIn(createApp(ctx), 'engineer')
  const { site, limit } = await buildHeaterTrip(eng)
  crId = (
    await draftChange(eng, {
      siteId: site.id,
      title: 'With attachments',
      items: [{ kind: 'create', limitId: limit.id }],
    })
  ).id
})

const upload = (file: Buffer, name: string) =>
  eng.upload(`/api/change-requests/${crId}/attachments`, {}, { name, content: file })
const download = (id: number) => eng.getBytes(`/api/change-requests/${crId}/attachments/${id}`)

describe('change request attachments (stored in PostgreSQL, type checked by content)', () => {
  it('accepts a PDF and a PNG and gives back the same bytes', async () => {
    const pdf = (await upload(PDF, 'hazop-extract.pdf').expect(201)).body
    expect(pdf).toMatchObject({ fileName: 'hazop-extract.pdf', contentType: 'application/pdf', sizeBytes: PDF.length })
    // the type comes from the content, whatever the name says
    const png = (await upload(PNG, 'trend-screenshot.pdf').expect(201)).body
    expect(png).toMatchObject({ contentType: 'image/png', sizeBytes: PNG.length })

    const gotPdf = await download(pdf.id).expect(200)
    expect(gotPdf.headers['content-type']).toBe('application/pdf')
    expect(Buffer.compare(gotPdf.body as Buffer, PDF)).toBe(0)
    const gotPng = await download(png.id).expect(200)
    expect(gotPng.headers['content-type']).toBe('image/png')
    expect(Buffer.compare(gotPng.body as Buffer, PNG)).toBe(0)

    const cr = (await eng.get(`/api/change-requests/${crId}`).expect(200)).body
    expect(
      cr.attachments.map((a: { id: number; contentType: string; uploadedBy: string }) => [
        a.id,
        a.contentType,
        a.uploadedBy,
      ]),
    ).toEqual([
      [pdf.id, 'application/pdf', 'Selma Rookwood'],
      [png.id, 'image/png', 'Selma Rookwood'],
    ])
    const events = await ctx.db
      .selectFrom('audit_event')
      .select('after')
      .where('action', '=', 'change_request.attach')
      .where('entity_id', '=', String(crId))
      .orderBy('id')
      .execute()
    expect(events.map((e) => (e.after as { attachmentId: number }).attachmentId)).toEqual([pdf.id, png.id])
  })

  // OWASP File Upload Cheat Sheet: the stored name's extension follows the type validated from the content
  it('stores a PDF sent as x.html under the name x.pdf and serves it so', async () => {
    const att = (await upload(PDF, 'x.html').expect(201)).body
    expect(att).toMatchObject({ fileName: 'x.pdf', contentType: 'application/pdf' })
    const got = await download(att.id).expect(200)
    expect(got.headers['content-disposition']).toBe('attachment; filename="x.pdf"')
    const png = (await upload(PNG, 'trend.PNG.exe').expect(201)).body
    expect(png.fileName).toBe('trend.PNG.png')
    const noName = (await upload(PNG, '.html').expect(201)).body
    expect(noName.fileName).toBe('attachment.png')
  })

  it('refuses a text file named .pdf with 400 and writes nothing', async () => {
    const before = await rowCounts(ctx.db)
    const res = await upload(Buffer.from('setpoint = 780 °C\nthis is not a PDF\n', 'utf8'), 'datasheet.pdf').expect(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
    expect(res.body.error.details.fields.file).toEqual(['Not a PDF, PNG or JPEG file'])
    expect(await rowCounts(ctx.db)).toEqual(before)
  })

  it('refuses a file over 10 MB and writes nothing', async () => {
    const before = await rowCounts(ctx.db)
    const big = Buffer.alloc(MAX_ATTACHMENT_BYTES + 1, 0x20)
    PDF.copy(big)
    const res = await upload(big, 'scan.pdf')
    expect(res.status).toBe(413)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
    expect(res.body.error.details.fields.file).toEqual(['Too large'])
    expect(await rowCounts(ctx.db)).toEqual(before)
    // exactly 10 MB is accepted
    const max = Buffer.alloc(MAX_ATTACHMENT_BYTES, 0x20)
    PDF.copy(max)
    expect((await upload(max, 'scan.pdf').expect(201)).body.sizeBytes).toBe(MAX_ATTACHMENT_BYTES)
  })

  it('refuses an upload without a file with 400', async () => {
    const before = await rowCounts(ctx.db)
    const res = await eng.post(`/api/change-requests/${crId}/attachments`, {}).expect(400)
    expect(res.body.error.details.fields.file).toEqual(['Choose a file'])
    expect(await rowCounts(ctx.db)).toEqual(before)
  })
})
