// Starts a throwaway PostgreSQL cluster in a temporary folder (never the dev data), migrates once into a template
// database as the owner role, and tears everything down afterwards. Each test file clones its own database.
import { execFile } from 'node:child_process'
import { mkdtemp, rm } from 'node:fs/promises'
import os from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'
import pg from 'pg'
import type { TestProject } from 'vitest/node'
import { createAuditKeyFile } from '../server/features/audit/audit.key.ts'
import { freePort } from '../server/dev/free-port.ts'

const run = promisify(execFile)

export default async function setup(project: TestProject) {
  const dir = await mkdtemp(path.join(os.tmpdir(), 'limitkeeper-test-'))
  await run('chmod', ['755', dir])
  const port = await freePort()
  const env = {
    ...process.env,
    PG_DIR: path.join(dir, 'pg'),
    PGPORT: String(port),
    PG_FAST: '1',
    DB_NAME: 'lk_template',
  }
  const stop = async () => {
    await run('bash', ['server/db/pg.sh', 'stop'], { env }).catch(() => {})
    await rm(dir, { recursive: true, force: true })
  }
  try {
    const { stdout } = await run('bash', ['server/db/pg.sh', 'start'], { env })
    const vars = Object.fromEntries(
      stdout
        .trim()
        .split('\n')
        .map((l) => l.split(/=(.*)/s).slice(0, 2)),
    )
    await run(process.execPath, ['--import', 'tsx', 'server/db/migrate-cli.ts'], {
      env: { ...process.env, MIGRATION_DATABASE_URL: vars.MIGRATION_DATABASE_URL },
    })
    const admin = new pg.Client({ connectionString: vars.SUPER_URL })
    await admin.connect()
    await admin.query('ALTER DATABASE lk_template WITH IS_TEMPLATE true ALLOW_CONNECTIONS false')
    await admin.end()
    project.provide('superUrl', vars.SUPER_URL)
    project.provide('ownerUrl', vars.MIGRATION_DATABASE_URL)
    project.provide('appUrl', vars.DATABASE_URL)
    project.provide('templateDb', 'lk_template')
    // the audit key of this run (keyed links, signed checkpoints), outside the repository like a real one
    const keyFile = path.join(dir, 'audit-key.json')
    createAuditKeyFile(keyFile)
    process.env.AUDIT_KEY_FILE = keyFile
    process.env.AUDIT_CHECKPOINT_DIR = path.join(dir, 'audit-checkpoints')
    project.provide('auditKeyFile', keyFile)
  } catch (err) {
    await stop()
    throw err
  }
  return stop
}
