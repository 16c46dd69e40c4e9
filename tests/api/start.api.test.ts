// `npm start` as a user runs it: one supervising process that creates and starts a project-local PostgreSQL cluster,
// migrates, seeds, serves, and on SIGTERM stops everything it started, PostgreSQL included.
import { execFile } from 'node:child_process'
import { mkdtemp, rm } from 'node:fs/promises'
import net from 'node:net'
import os from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'
import { afterAll, describe, expect, it } from 'vitest'
import { freePort } from '../../server/dev/free-port.ts'
import { exited, spawnStart, startServer } from './helpers/start-process.ts'
import { until } from './helpers/wait.ts'

const run = promisify(execFile)
const dirs: string[] = []
afterAll(async () => {
  for (const d of dirs) await rm(d, { recursive: true, force: true })
})

/** The environment of a fresh clone: empty DATABASE_URL, so start creates and runs a local cluster in `pgDir`. */
const localCluster = (pgDir: string) => ({
  PG_DIR: pgDir,
  PORT: '0',
  SMTP_PORT: '0',
  MODBUS_SIM_PORT: '0',
  NODE_ENV: 'development',
  DATABASE_URL: '',
  MIGRATION_DATABASE_URL: '',
})

async function answers(url: string): Promise<boolean> {
  return fetch(`${url}/api/health`).then(
    () => true,
    () => false,
  )
}

async function postgresRunning(pgDir: string): Promise<boolean> {
  const { stdout } = await run('ps', ['-eo', 'args'])
  return stdout.split('\n').some((l) => l.includes('postgres') && l.includes(path.join(pgDir, 'data')))
}

describe('npm start', () => {
  it('starts the cluster, serves, reuses the data on a second start, and leaves no postgres process after SIGTERM', async () => {
    const dir = await mkdtemp(path.join(os.tmpdir(), 'limitkeeper-start-'))
    dirs.push(dir)
    await run('chmod', ['755', dir])
    const pgDir = path.join(dir, 'pg')
    // empty DATABASE_URL: the local cluster path, as on a fresh clone
    const env = { ...localCluster(pgDir), PGPORT: String(await freePort()) }
    const first = await startServer(env)
    expect(first.output()).toContain('Demo plant seeded.')
    const health = await fetch(`${first.url}/api/health`)
    expect(await health.json()).toEqual({ status: 'ok', database: 'ok', readStandby: 'none' })
    expect(await postgresRunning(pgDir)).toBe(true)
    first.child.kill('SIGTERM')
    expect(await exited(first.child)).toBe(0)
    expect(await postgresRunning(pgDir)).toBe(false)

    // the second start as a service manager runs it: `npm start`, and SIGTERM to the npm process only
    const second = await startServer(env, { how: 'npm' })
    expect(second.output()).not.toContain('Demo plant seeded.')
    const session = await fetch(`${second.url}/api/session`)
    expect(session.status).toBe(200)
    second.child.kill('SIGTERM')
    await exited(second.child)
    // the app and PostgreSQL stop too, whichever process got the signal (polled: no fixed wait)
    await until(
      'the app and PostgreSQL stopped',
      async () => !(await postgresRunning(pgDir)) && !(await answers(second.url)),
      60_000,
      200,
    )
    expect(await postgresRunning(pgDir)).toBe(false)
    expect(await answers(second.url)).toBe(false)
  }, 180_000)

  it('says in one sentence what to do when the port is taken', async () => {
    const dir = await mkdtemp(path.join(os.tmpdir(), 'limitkeeper-start-'))
    dirs.push(dir)
    await run('chmod', ['755', dir])
    const blocker = net.createServer()
    await new Promise<void>((resolve) => blocker.listen(0, '127.0.0.1', () => resolve()))
    const port = (blocker.address() as net.AddressInfo).port
    const { child, output } = spawnStart({ ...localCluster(path.join(dir, 'pg')), PGPORT: String(port) })
    const code = await exited(child)
    blocker.close()
    expect(code).not.toBe(0)
    expect(output()).toContain(`Port ${port} is already in use: stop what listens there or set PGPORT to a free port.`)
  }, 120_000)
})
