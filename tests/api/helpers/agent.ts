import request from 'supertest'
import type { Express } from 'express'
import { beforeAll } from 'vitest'
import { createApp } from '../../../server/app.ts'
import { DEMO_PASSWORD } from '../../../server/seed/demo.ts'
import type { TestContext } from './test-db.ts'

/** A supertest agent that keeps the session cookie and sends the CSRF token on every state-changing call. */
export class ApiAgent {
  readonly agent: ReturnType<typeof request.agent>
  csrf = ''
  constructor(app: Express) {
    this.agent = request.agent(app)
  }

  async refreshCsrf() {
    const res = await this.agent.get('/api/session').expect(200)
    this.csrf = res.body.csrfToken
    return res
  }

  get(url: string) {
    return this.agent.get(url)
  }
  post(url: string, body?: unknown) {
    return this.agent
      .post(url)
      .set('X-CSRF-Token', this.csrf)
      .send(body as object)
  }
  patch(url: string, body?: unknown) {
    return this.agent
      .patch(url)
      .set('X-CSRF-Token', this.csrf)
      .send(body as object)
  }
  put(url: string, body?: unknown) {
    return this.agent
      .put(url)
      .set('X-CSRF-Token', this.csrf)
      .send(body as object)
  }
  /** GETs a download (a stored file, an export) with its body read as the raw bytes, a Buffer, whatever its type. */
  getBytes(url: string) {
    return this.agent
      .get(url)
      .buffer(true)
      .parse((res, cb) => {
        const chunks: Buffer[] = []
        res.on('data', (c: Buffer) => chunks.push(c))
        res.on('end', () => cb(null, Buffer.concat(chunks)))
      })
  }
  /** POSTs `body` and answers the body of the 201 Created answer; any other status fails the test. */
  async created(url: string, body?: unknown) {
    return (await this.post(url, body).expect(201)).body
  }
  delete(url: string) {
    return this.agent.delete(url).set('X-CSRF-Token', this.csrf)
  }
  /**
   * POSTs a multipart form: each of `fields` as a text part (undefined ones left out) and `file`, where given, as the
   * part named `file` (text sent as UTF-8). Answers the request, so the test still checks the status it expects.
   */
  upload(
    url: string,
    fields: Record<string, string | number | boolean | undefined>,
    file?: { name: string; content: string | Buffer },
    method: 'post' | 'put' | 'patch' | 'delete' = 'post',
  ) {
    let req = this.agent[method](url).set('X-CSRF-Token', this.csrf)
    for (const [k, v] of Object.entries(fields)) if (v !== undefined) req = req.field(k, String(v))
    if (file)
      req = req.attach('file', Buffer.isBuffer(file.content) ? file.content : Buffer.from(file.content), file.name)
    return req
  }

  /** Signs in (demo password by default) and keeps the fresh CSRF token; throws unless it worked. */
  async signIn(email: string, password = DEMO_PASSWORD) {
    if (!this.csrf) await this.refreshCsrf()
    const res = await this.post('/api/session', { email, password })
    if (res.status !== 201) throw new Error(`sign-in as ${email} failed: ${res.status} ${JSON.stringify(res.body)}`)
    this.csrf = res.body.csrfToken
    return res.body as { user: { id: number; roles: { siteId: number; role: string }[] } }
  }
}

/** The id of the site with this code among the sites `agent` lists (GET /api/sites); throws when it is not listed. */
export async function siteIdByCode(agent: ApiAgent, code: string): Promise<number> {
  const sites = (await agent.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]
  const site = sites.find((s) => s.code === code)
  if (!site) throw new Error(`site ${code} is not among the sites listed`)
  return site.id
}

/** Signs in as a demo account by role name (`engineer`, `approver`, …). */
export async function signedIn(app: Express, who: string): Promise<ApiAgent> {
  const a = new ApiAgent(app)
  await a.signIn(`${who}@fernhollow.example`)
  return a
}

/**
 * A new account made by the administrator (POST /api/users) and signed in with a session of its own; answers its
 * agent and its id.
 */
export async function newAccount(
  app: Express,
  admin: ApiAgent,
  account: { email: string; displayName: string; password: string; roles: { siteId: number; role: string }[] },
) {
  const id = (await admin.post('/api/users', account).expect(201)).body.id as number
  const agent = new ApiAgent(app)
  await agent.signIn(account.email, account.password)
  return { agent, id }
}

/** Demo accounts signed in under the test's own names (`{ eng: 'engineer' }`), one session each. */
export async function signedInAs<const W extends Record<string, string>>(app: Express, who: W) {
  const as = {} as Record<keyof W, ApiAgent>
  for (const k of Object.keys(who) as (keyof W)[]) as[k] = await signedIn(app, who[k])
  return as
}

/** The demo plant's accounts by role name (server/seed/demo.ts), all a role test signs in as. */
export const DEMO_ACCOUNTS = [
  'engineer',
  'approver',
  'approver2',
  'technician',
  'supervisor',
  'operator',
  'manager',
  'auditor',
  'admin',
] as const

/**
 * Agents of demo accounts under the test's own names (`{ eng: 'engineer' }`), (re)signed in by `signInAll()`: moving
 * the clock by hours ends the sessions (idle limit), as it would in the plant. `app` is read at sign-in, so the app
 * may be created in beforeAll. `signInAgain()` signs the same agents in afresh (a new CSRF token, then the demo
 * password), each keeping its cookie jar.
 */
export function crewAs<const W extends Record<string, string>>(app: () => Express, who: W) {
  const as = {} as Record<keyof W, ApiAgent>
  async function signInAll() {
    Object.assign(as, await signedInAs(app(), who))
  }
  async function signInAgain() {
    for (const k of Object.keys(who) as (keyof W)[]) {
      await as[k].refreshCsrf()
      await as[k].signIn(`${who[k]}@fernhollow.example`)
    }
  }
  return { as, signInAll, signInAgain }
}

/** As crewAs, each account under its role name. */
export function crewOf<const P extends readonly string[]>(app: () => Express, people: P) {
  return crewAs(app, Object.fromEntries(people.map((p) => [p, p])) as Record<P[number], string>)
}

/**
 * Per test file: the app on the file's test database (useTestDb) and the demo accounts `people` (crewOf), made and
 * signed in before the file's tests, with the clock first set to `opts.at` where given. `at(iso)` moves the clock
 * and signs everyone in again (sessions end after 30 min idle on that clock).
 */
export function useSignedIn<const P extends readonly string[]>(
  ctx: TestContext,
  people: P,
  opts: { at?: string } = {},
) {
  let app: Express
  const crew = crewOf(() => app, people)
  beforeAll(async () => {
    if (opts.at) ctx.clock.set(opts.at)
    app = createApp(ctx)
    await crew.signInAll()
  })
  async function at(iso: string) {
    ctx.clock.set(iso)
    await crew.signInAgain()
  }
  return { ...crew, app: () => app, at }
}
