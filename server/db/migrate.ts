import { promises as fs } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { FileMigrationProvider, Kysely, Migrator, PostgresDialect } from 'kysely'
import pg from 'pg'

const migrationFolder = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../migrations')

/** Runs every pending migration as the owner role; throws with the failing migration's name. */
export async function migrateToLatest(connectionString: string): Promise<string[]> {
  const db = new Kysely<unknown>({ dialect: new PostgresDialect({ pool: new pg.Pool({ connectionString, max: 1 }) }) })
  try {
    // Migrations of parallel branches can sort before one already run: run them in name order all the same.
    const migrator = new Migrator({
      db,
      provider: new FileMigrationProvider({ fs, path, migrationFolder }),
      allowUnorderedMigrations: true,
    })
    const { error, results } = await migrator.migrateToLatest()
    const failed = results?.find((r) => r.status === 'Error')
    if (error) {
      const why = error instanceof Error ? error.message : String(error)
      throw new Error(`Migration ${failed?.migrationName ?? ''} failed: ${why}`)
    }
    return (results ?? []).filter((r) => r.status === 'Success').map((r) => r.migrationName)
  } finally {
    await db.destroy()
  }
}
