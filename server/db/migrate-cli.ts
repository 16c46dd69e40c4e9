import { migrateToLatest } from './migrate.ts'

const url = process.env.MIGRATION_DATABASE_URL ?? process.env.DATABASE_URL
if (!url) {
  console.error('Set MIGRATION_DATABASE_URL (the owner role) to migrate.')
  process.exit(2)
}
try {
  const done = await migrateToLatest(url)
  console.log(done.length ? `Applied: ${done.join(', ')}` : 'Database is up to date.')
} catch (err) {
  console.error(err instanceof Error ? err.message : err)
  process.exit(1)
}
