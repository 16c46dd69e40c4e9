// `npm start` as a user runs it: one supervising process that creates and starts a project-local PostgreSQL cluster,
// migrates, seeds, serves, and on SIGTERM stops everything it started, PostgreSQL included.
import { type ChildProcess, execFile, spawn } from 'node:child_process'
import { mkdtemp, rm } from 'node:fs/promises'
import net from 'node:net'
import os from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'
import { afterAll, describe, expect, it } from 'vitest'
import { freePort } from '../../server/dev/free-port.ts'

const run = promisify(execFile)
const dirs: string[] = []
afterAll(async () => {
  for (const d of dirs) await rm(d, { recursive: true, force: true })
})

/** Starts `server/start.ts` and resolves with its URL once it prints that it is ready (or rejects with its output). */
function start(
  env: Record<string, string>,
  how: 'node' | 'npm' = 'node',
): Promise<{ child: ChildProcess; url: string; output: () => string }> {
  const [cmd, args] =
    how === 'npm'
      ? ['npm', ['start', '--', '--no-build']]
      : [process.execPath, ['--import', 'tsx', 'server/start.ts', '--no-build']]
  const child = spawn(cmd, args, {
    env: { ...process.env, ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  })
  let out = ''
  return new Promise((resolve, reject) => {
    const onData = (b: Buffer) => {
      out += b.toString()
      const m = /ready at (http:\/\/127\.0\.0\.1:\d+)/.exec(out)
      if (m) resolve({ child, url: m[1], output: () => out })
    }
    child.stdout!.on('data', onData)
    child.stderr!.on('data', onData)
    child.on('exit', (code) => reject(new Error(`start exited with ${code} before it was ready:\n${out}`)))
  })
}

function stopped(child: ChildProcess): Promise<number | null> {
  return new Promise((resolve) => {
    if (child.exitCode !== null) resolve(child.exitCode)
    else child.on('exit', (code) => resolve(code))
  })
}

async function answers(url: string): Promise<boolean> {
  return fetch(`${url}/api/health`).then(
    () => true,
    () => false,
  )
}

async function until(cond: () => Promise<boolean>, timeoutMs: number) {
  const end = Date.now() + timeoutMs
  while (!(await cond())) {
    if (Date.now() > end) throw new Error('condition not met in time')
    await new Promise((r) => setTimeout(r, 200))
  }
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
    const env = {
      PG_DIR: pgDir,
      PGPORT: String(await freePort()),
      PORT: '0',
      SMTP_PORT: '0',
      MODBUS_SIM_PORT: '0',
      NODE_ENV: 'development',
      DATABASE_URL: '',
      MIGRATION_DATABASE_URL: '',
    }
    const first = await start(env)
    expect(first.output()).toContain('Demo plant seeded.')
    const health = await fetch(`${first.url}/api/health`)
    expect(await health.json()).toEqual({ status: 'ok', database: 'ok', readStandby: 'none' })
    expect(await postgresRunning(pgDir)).toBe(true)
    first.child.kill('SIGTERM')
    expect(await stopped(first.child)).toBe(0)
    expect(await postgresRunning(pgDir)).toBe(false)

    // the second start as a service manager runs it: `npm start`, and SIGTERM to the npm process only
    const second = await start(env, 'npm')
    expect(second.output()).not.toContain('Demo plant seeded.')
    const session = await fetch(`${second.url}/api/session`)
    expect(session.status).toBe(200)
    second.child.kill('SIGTERM')
    await stopped(second.child)
    // the app and PostgreSQL stop too, whichever process got the signal (polled: no fixed wait)
    await until(async () => !(await postgresRunning(pgDir)) && !(await answers(second.url)), 60_000)
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
    const child = spawn(process.execPath, ['--import', 'tsx', 'server/start.ts', '--no-build'], {
      env: {
        ...process.env,
        PG_DIR: path.join(dir, 'pg'),
        PGPORT: String(port),
        PORT: '0',
        SMTP_PORT: '0',
        MODBUS_SIM_PORT: '0',
        NODE_ENV: 'development',
        DATABASE_URL: '',
        MIGRATION_DATABASE_URL: '',
      },
      stdio: ['ignore', 'pipe', 'pipe'],
    })
    let out = ''
    child.stdout!.on('data', (b: Buffer) => {
      out += b.toString()
    })
    child.stderr!.on('data', (b: Buffer) => {
      out += b.toString()
    })
    const code = await stopped(child)
    blocker.close()
    expect(code).not.toBe(0)
    expect(out).toContain(`Port ${port} is already in use: stop what listens there or set PGPORT to a free port.`)
  }, 120_000)
})
