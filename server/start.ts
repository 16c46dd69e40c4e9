// `npm start`: one process supervises everything it needs. Without DATABASE_URL it creates (first run) and starts a
// project-local PostgreSQL cluster on 127.0.0.1, migrates, seeds the demo plant into an empty database, starts the
// local fake SMTP server and the simulated Modbus device, builds the client when its sources changed,
// and serves app and API.
// Ctrl-C or SIGTERM stops everything it started, PostgreSQL included.
import { execFile, spawn } from 'node:child_process'
import { existsSync, readdirSync, statSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { promisify } from 'node:util'
import { loadConfig } from './config.ts'
import { createDb } from './db/index.ts'
import { migrateToLatest } from './db/migrate.ts'
import { startFakeSmtp } from './dev/fake-smtp.ts'
import { startModbusSim } from './dev/modbus-sim.ts'
import { startServer } from './index.ts'
import { logger } from './logger.ts'
import { auditKeyPath, createAuditKeyFile } from './features/audit/audit.key.ts'
import { systemClock } from './clock.ts'
import { seedDemoActivity } from './seed/demo-activity.ts'
import { seedDemoShiftHandover } from './seed/demo-shift-handover.ts'
import { DEMO_ACCOUNTS, DEMO_PASSWORD, seedDemo } from './seed/demo.ts'
import { seedDemoReconciliation } from './seed/demo-reconciliation.ts'

const run = promisify(execFile)
const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..')
const pgScript = path.join(root, 'server/db/pg.sh')
const started = Date.now()
const cleanups: (() => Promise<void>)[] = []
let stopping = false

function fail(sentence: string): never {
  logger.error(sentence)
  void shutdown(1)
  throw new Error(sentence)
}

async function shutdown(code: number) {
  if (stopping) return
  stopping = true
  for (const c of cleanups.reverse()) await c().catch((err) => logger.error({ err }, 'stopping a part failed'))
  process.exit(code)
}
process.on('SIGINT', () => {
  logger.info('Stopping…')
  void shutdown(0)
})
process.on('SIGTERM', () => void shutdown(0))
// `npm start` runs this file under npm and a shell; a service manager signals the process it started (npm), which
// may end without passing the signal on. Whichever process gets the signal, everything stops: when the parent goes
// away this process is re-parented, and it shuts down as on SIGTERM.
const parentPid = process.ppid
setInterval(() => {
  if (process.ppid !== parentPid && !stopping) {
    logger.info('The process that started Limitkeeper has ended; stopping…')
    void shutdown(0)
  }
}, 250).unref()

function newestMtime(p: string): number {
  if (!existsSync(p)) return 0
  const st = statSync(p)
  if (!st.isDirectory()) return st.mtimeMs
  return readdirSync(p).reduce((m, f) => Math.max(m, newestMtime(path.join(p, f))), st.mtimeMs)
}

async function startLocalPostgres(): Promise<void> {
  const env = { ...process.env, PGPORT: process.env.PGPORT ?? '54329' }
  try {
    const { stdout, stderr } = await run('bash', [pgScript, 'start'], { env })
    if (stderr.trim()) logger.info({ component: 'postgres' }, stderr.trim())
    for (const line of stdout.split('\n')) {
      const m = /^([A-Z_]+)=(.*)$/.exec(line.trim())
      if (m && ['DATABASE_URL', 'MIGRATION_DATABASE_URL', 'PG_DIR'].includes(m[1])) process.env[m[1]] = m[2]
    }
    cleanups.push(async () => {
      await run('bash', [pgScript, 'stop'], { env })
      logger.info({ component: 'postgres' }, 'PostgreSQL stopped.')
    })
    logger.info(
      { component: 'postgres' },
      `PostgreSQL running on 127.0.0.1:${env.PGPORT} (data in ${process.env.PG_DIR})`,
    )
  } catch (err) {
    const e = err as { code?: number; stderr?: string }
    fail(e.stderr?.trim().split('\n').pop() || 'PostgreSQL could not be started; see .data/pg/server.log.')
  }
}

async function buildClientIfChanged() {
  const distIndex = path.join(root, 'dist/index.html')
  const sources = Math.max(
    ...['src', 'shared', 'index.html', 'vite.config.ts', 'package-lock.json'].map((p) =>
      newestMtime(path.join(root, p)),
    ),
  )
  if (existsSync(distIndex) && statSync(distIndex).mtimeMs >= sources) return
  logger.info('Building the client…')
  await new Promise<void>((resolve, reject) => {
    const child = spawn(
      process.execPath,
      [path.join(root, 'node_modules/vite/bin/vite.js'), 'build', '--logLevel', 'warn'],
      { cwd: root, stdio: 'inherit' },
    )
    child.on('exit', (code) =>
      code === 0 ? resolve() : reject(new Error('The client build failed; see the messages above.')),
    )
  })
}

/** The audit key file (docs/security.md, "Audit trail integrity"): created on the first run when missing. */
function ensureAuditKey() {
  const file = auditKeyPath()
  if (existsSync(file)) return
  createAuditKeyFile(file)
  logger.warn(
    `Created the audit key ${file} (keyed links and signed checkpoints of the audit trail).\n` +
      'In production keep it outside the database host and its backups, and back it up separately: without it the ' +
      'audit trail cannot be verified (docs/deployment.md).',
  )
}

async function main() {
  ensureAuditKey()
  const localDb = !process.env.DATABASE_URL
  if (localDb) await startLocalPostgres()
  process.env.NODE_ENV ??= 'development'
  const migrationUrl = process.env.MIGRATION_DATABASE_URL
  if (migrationUrl) {
    try {
      await migrateToLatest(migrationUrl)
    } catch (err) {
      fail(`${err instanceof Error ? err.message : err} — fix the migration or the database and run npm start again.`)
    }
  } else {
    logger.warn(
      'Migrations not run: set MIGRATION_DATABASE_URL (the owner role) to migrate at start, or run npm run db:migrate.',
    )
  }

  let smtpPort: number | null = null
  if (localDb || process.env.FAKE_SMTP === '1') {
    const smtp = await startFakeSmtp(Number(process.env.SMTP_PORT ?? 2525))
    smtpPort = smtp.port
    process.env.SMTP_HOST = '127.0.0.1'
    process.env.SMTP_PORT = String(smtp.port)
    cleanups.push(() => smtp.close())
  }
  // the simulated Modbus device holding the demo plant's limit controllers (read only; it refuses every write)
  let modbusSimPort = Number(process.env.MODBUS_SIM_PORT ?? 1502)
  if (!Number.isInteger(modbusSimPort) || modbusSimPort < 0 || modbusSimPort > 65535)
    fail('Invalid configuration: MODBUS_SIM_PORT: a port number from 0 to 65535 (0 = a free port)')
  if (localDb || process.env.MODBUS_SIM === '1') {
    const sim = await startModbusSim(modbusSimPort).catch((err) =>
      fail(err instanceof Error ? err.message : String(err)),
    )
    modbusSimPort = sim.port
    cleanups.push(() => sim.close())
  }
  const config = loadConfig()
  // the demo plant goes only into the local cluster, or where SEED_DEMO=1 asks for it; never in production
  if (config.NODE_ENV !== 'production' && migrationUrl && (localDb || process.env.SEED_DEMO === '1')) {
    const { db } = createDb(migrationUrl, 2)
    try {
      if (await seedDemo(db)) {
        await seedDemoActivity(db, config, systemClock)
        await seedDemoShiftHandover(db, systemClock)
        await seedDemoReconciliation(db, systemClock, { port: modbusSimPort })
        logger.info('Demo plant seeded.')
      }
    } finally {
      await db.destroy()
    }
  }
  if (!process.argv.includes('--no-build')) await buildClientIfChanged()
  const server = await startServer(config).catch((err) => fail(err instanceof Error ? err.message : String(err)))
  cleanups.push(() => server.close())

  // the banner is for the person at the terminal (URL and demo accounts), not a log event
  console.log(`\nLimitkeeper is ready at ${server.url}  (${((Date.now() - started) / 1000).toFixed(1)} s)`)
  if (smtpPort)
    console.log(`Mail goes to the local fake SMTP server on 127.0.0.1:${smtpPort}; admins see it under Mail.`)
  if (localDb || process.env.MODBUS_SIM === '1')
    console.log(`Simulated Modbus device (demo limit controllers, read only) on 127.0.0.1:${modbusSimPort}.`)
  if (config.NODE_ENV !== 'production' && (localDb || process.env.SEED_DEMO === '1')) {
    console.log(`Demo accounts (password: ${DEMO_PASSWORD}):`)
    for (const a of DEMO_ACCOUNTS) console.log(`  ${a.email.padEnd(34)} ${a.label}`)
  }
  console.log('Press Ctrl-C to stop.')
}

main().catch((err) => {
  if (!stopping) {
    logger.error({ err }, err instanceof Error ? err.message : String(err))
    void shutdown(1)
  }
})
