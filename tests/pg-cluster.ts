// A throwaway PostgreSQL cluster for the test set-up, the benchmarks and the screenshots: server/db/pg.sh in a
// temporary folder (never the dev data) on a port free at run time, without fsync. Not migrated: each caller
// migrates it the way it needs.
import { execFile } from 'node:child_process'
import { mkdtemp, rm } from 'node:fs/promises'
import os from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'
import { freePort } from '../server/dev/free-port.ts'

const run = promisify(execFile)

export interface ThrowawayCluster {
  /** the temporary folder; the cluster lives in its `pg` folder, callers may keep their own files beside it */
  dir: string
  superUrl: string
  /** the owner role's URL (migrations, seed) */
  ownerUrl: string
  /** the runtime role's URL */
  appUrl: string
  /** server/db/pg.sh start or stop on this cluster (a test may restart it) */
  pg(command: 'start' | 'stop'): Promise<unknown>
  /** stops the cluster and removes the folder; never throws for a cluster already stopped */
  stop(): Promise<void>
}

/** The KEY=VALUE lines that `pg.sh start` prints. */
function keyValues(stdout: string): Record<string, string> {
  return Object.fromEntries(
    stdout
      .trim()
      .split('\n')
      .map((l) => l.split(/=(.*)/s).slice(0, 2)),
  )
}

/**
 * Starts a cluster in a new folder under the system's temporary folder named `<prefix>…`, with the database `dbName`
 * (pg.sh's default where none is given). Stops it and removes the folder again when the start fails.
 */
export async function startThrowawayCluster(prefix: string, dbName?: string): Promise<ThrowawayCluster> {
  const dir = await mkdtemp(path.join(os.tmpdir(), prefix))
  await run('chmod', ['755', dir])
  const env: NodeJS.ProcessEnv = {
    ...process.env,
    PG_DIR: path.join(dir, 'pg'),
    PGPORT: String(await freePort()),
    PG_FAST: '1',
    ...(dbName ? { DB_NAME: dbName } : {}),
  }
  const pg = (command: 'start' | 'stop') => run('bash', ['server/db/pg.sh', command], { env })
  const stop = async () => {
    await pg('stop').catch(() => {})
    await rm(dir, { recursive: true, force: true })
  }
  try {
    const vars = keyValues((await pg('start')).stdout)
    return { dir, superUrl: vars.SUPER_URL, ownerUrl: vars.MIGRATION_DATABASE_URL, appUrl: vars.DATABASE_URL, pg, stop }
  } catch (err) {
    await stop()
    throw err
  }
}

/** Migrates a database to the latest migration in a child process, as `npm run db:migrate` does. */
export async function migrateInChild(ownerUrl: string) {
  await run(process.execPath, ['--import', 'tsx', 'server/db/migrate-cli.ts'], {
    env: { ...process.env, MIGRATION_DATABASE_URL: ownerUrl },
  })
}
