import { readdirSync, existsSync } from 'node:fs'
import request from 'supertest'
import { beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { signedIn } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// What the first load gets: precompressed hashed assets cached for a year, index.html asked for again each time,
// API answers compressed (docs/architecture.md, "Serving the client"). Needs the built client (npm test builds it).
const ctx = useTestDb()
let app: ReturnType<typeof createApp>
let script = ''

beforeAll(() => {
  if (!existsSync('dist/index.html')) throw new Error('Build the client first (npm run build); npm test does it')
  script = readdirSync('dist/assets').find((f) => /^index-.*\.js$/.test(f))!
  app = createApp(ctx)
})

describe('serving the client', () => {
  it('sends a hashed script precompressed with brotli (or gzip) and caches it for a year as immutable', async () => {
    const br = await request(app).get(`/assets/${script}`).set('Accept-Encoding', 'br, gzip').expect(200)
    expect(br.headers['content-encoding']).toBe('br')
    expect(br.headers['cache-control']).toBe('public, max-age=31536000, immutable')
    expect(br.headers['content-type']).toMatch(/javascript/)
    const gz = await request(app).get(`/assets/${script}`).set('Accept-Encoding', 'gzip').expect(200)
    expect(gz.headers['content-encoding']).toBe('gzip')
    const plain = await request(app).get(`/assets/${script}`).set('Accept-Encoding', 'identity').expect(200)
    expect(plain.headers['content-encoding']).toBeUndefined()
    expect(Number(plain.headers['content-length'])).toBeGreaterThan(Number(gz.headers['content-length'] ?? 0))
  })

  it('asks for index.html again on every load, for a route and for the file itself', async () => {
    const page = await request(app).get('/register').set('Accept-Encoding', 'gzip').expect(200)
    expect(page.headers['cache-control']).toBe('no-cache')
    expect(page.text).toContain('<div id="app">')
    const file = await request(app).get('/index.html').expect(200)
    expect(file.headers['cache-control']).toBe('no-cache')
  })

  it('compresses API answers', async () => {
    const eng = await signedIn(app, 'engineer')
    const res = await eng.get('/api/sites').set('Accept-Encoding', 'gzip').expect(200)
    expect(res.headers['content-encoding']).toBe('gzip')
    expect(res.body.items.length).toBeGreaterThan(0)
  })
})
