// Starts a throwaway PostgreSQL cluster in a temporary folder (never the dev data), migrates once into a template
// database as the owner role, and tears everything down afterwards. Each test file clones its own database.
import path from 'node:path'
import pg from 'pg'
import type { TestProject } from 'vitest/node'
import { createAuditKeyFile } from '../server/features/audit/audit.key.ts'
import { migrateInChild, startThrowawayCluster } from './pg-cluster.ts'

export default async function setup(project: TestProject) {
  const cluster = await startThrowawayCluster('limitkeeper-test-', 'lk_template')
  const { dir, stop } = cluster
  try {
    await migrateInChild(cluster.ownerUrl)
    const admin = new pg.Client({ connectionString: cluster.superUrl })
    await admin.connect()
    await admin.query('ALTER DATABASE lk_template WITH IS_TEMPLATE true ALLOW_CONNECTIONS false')
    await admin.end()
    project.provide('superUrl', cluster.superUrl)
    project.provide('ownerUrl', cluster.ownerUrl)
    project.provide('appUrl', cluster.appUrl)
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
