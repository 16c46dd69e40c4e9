import { sign, verify } from 'node:crypto'
import { mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import canonicalize from 'canonicalize'
import type { Clock, DueJob } from '../../clock.ts'
import type { Db } from '../../db/index.ts'
import { mailNotice } from '../mail/mail.outbox.ts'
import { type AuditKeys, loadAuditKeys } from './audit.key.ts'
import { activeAuditorEmails, type CheckpointClaim, readSealedHead, sealAll } from './audit.repository.ts'

/**
 * Signed checkpoints of the audit chain's head (docs/security.md, "Audit trail integrity"): the head's id and hash,
 * the number of events up to it and where keyed links began, signed with the Ed25519 key of the audit key file.
 * They are files outside PostgreSQL (AUDIT_CHECKPOINT_DIR, by default .data/audit-checkpoints/), written by the
 * daily job and by `npm run audit:checkpoint`, and mailed to the auditors of every site, so a copy lives where the
 * database's administrators cannot reach it.
 */
export interface Checkpoint {
  /** 2 since the sealer: the head is named by its chain position. Version 1 files name it by id (then the same). */
  version: 2
  createdAt: string
  headSeq: number
  headId: number
  headHash: string
  count: number
  firstKeyedSeq: number | null
  keyId: string
  /** Ed25519 over the RFC 8785 canonical JSON of every other field, base64. */
  signature: string
}

/** A checkpoint file as written before the sealer (the chain ordered by id). */
interface CheckpointV1 {
  version: 1
  createdAt: string
  headId: number
  headHash: string
  count: number
  firstKeyedId: number | null
  keyId: string
  signature: string
}

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..')

export function checkpointDir(env: NodeJS.ProcessEnv = process.env): string {
  return path.resolve(env.AUDIT_CHECKPOINT_DIR || path.join(root, '.data/audit-checkpoints'))
}

function signedText(c: Omit<Checkpoint, 'signature'> | Omit<CheckpointV1, 'signature'>): Buffer {
  const { signature: _s, ...body } = c as Checkpoint
  void _s
  return Buffer.from(canonicalize(body)!, 'utf8')
}

/** Reads the sealed head in one snapshot and writes a signed checkpoint file; answers it with its file name. */
export async function writeCheckpoint(
  db: Db,
  clock: Clock,
  opts: { keys?: AuditKeys; dir?: string } = {},
): Promise<Checkpoint & { file: string }> {
  const keys = opts.keys ?? loadAuditKeys()
  const dir = opts.dir ?? checkpointDir()
  const head = await readSealedHead(db)
  const body: Omit<Checkpoint, 'signature'> = {
    version: 2,
    createdAt: clock.now().toISOString(),
    headSeq: Number(head.last?.seq ?? 0),
    headId: Number(head.last?.id ?? 0),
    headHash: head.last?.hash ?? '',
    count: head.count,
    firstKeyedSeq: head.firstKeyed,
    keyId: keys.keyId,
  }
  const checkpoint: Checkpoint = {
    ...body,
    signature: sign(null, signedText(body), keys.signingKey).toString('base64'),
  }
  mkdirSync(dir, { recursive: true })
  const name = `checkpoint-${body.createdAt.replace(/[:.]/g, '-')}-${body.headSeq}.json`
  writeFileSync(path.join(dir, name), `${JSON.stringify(checkpoint, null, 2)}\n`, { flag: 'wx' })
  return { ...checkpoint, file: name }
}

/** Every checkpoint file of the folder whose signature the audit key's public half accepts; the others as problems. */
export function readCheckpoints(opts: { keys?: AuditKeys; dir?: string } = {}): {
  claims: CheckpointClaim[]
  problems: string[]
} {
  const keys = opts.keys ?? loadAuditKeys()
  const dir = opts.dir ?? checkpointDir()
  let names: string[]
  try {
    names = readdirSync(dir).filter((n) => n.endsWith('.json'))
  } catch {
    names = []
  }
  const claims: CheckpointClaim[] = []
  const problems: string[] = []
  for (const file of names.sort()) {
    let c: Checkpoint | CheckpointV1
    try {
      c = JSON.parse(readFileSync(path.join(dir, file), 'utf8'))
    } catch {
      problems.push(`checkpoint ${file} cannot be read`)
      continue
    }
    let good = false
    try {
      good =
        (c.version === 1 || c.version === 2) &&
        c.keyId === keys.keyId &&
        verify(null, signedText(c), keys.publicKey, Buffer.from(String(c.signature), 'base64'))
    } catch {
      good = false
    }
    if (!good) {
      problems.push(`checkpoint ${file} is not signed by this audit key (${keys.keyId})`)
      continue
    }
    // version 1 named the head by id: events linked then have their id as chain position
    const claim =
      c.version === 2
        ? { headSeq: c.headSeq, firstKeyedSeq: c.firstKeyedSeq }
        : { headSeq: c.headId, firstKeyedSeq: c.firstKeyedId }
    if (claim.headSeq > 0) claims.push({ file, ...claim, headHash: c.headHash, count: c.count })
  }
  return { claims, problems }
}

/**
 * Seals what waits, writes a checkpoint and mails it to the auditors of every site
 * (in the outbox; delivered by the mail job).
 */
export async function checkpointAndMail(db: Db, clock: Clock, opts: { keys?: AuditKeys; dir?: string } = {}) {
  // the checkpoint signs the sealed head: what was written before it is sealed first
  await sealAll(db, clock)
  const c = await writeCheckpoint(db, clock, opts)
  const auditors = await activeAuditorEmails(db)
  const { file, ...signed } = c
  await db.transaction().execute((trx) =>
    mailNotice(
      trx,
      clock,
      auditors.map((email) => ({ email })),
      {
        subject: `Audit trail checkpoint ${c.createdAt.slice(0, 10)}: head ${c.headSeq}`,
        topic: 'audit_checkpoint',
        paragraphs: [
          `Checkpoint of the audit trail at ${c.createdAt}: ` +
            `head event ${c.headId} at chain position ${c.headSeq}, ${c.count} sealed events.`,
          'Keep this message outside Limitkeeper. `npm run audit:verify` checks the trail against the checkpoint ' +
            'files; if the copy kept there differs from this one, the trail or its checkpoints were changed.',
          JSON.stringify(signed),
        ],
      },
    ),
  )
  return { ...c, file, mailed: auditors.length }
}

/** The daily checkpoint job. */
export function createAuditCheckpointJob(db: Db, clock: Clock): DueJob<{ headSeq: number; mailed: number }> {
  return {
    name: 'audit.checkpoint',
    intervalSec: 24 * 3600,
    async runDue() {
      const c = await checkpointAndMail(db, clock)
      return { headSeq: c.headSeq, mailed: c.mailed }
    },
  }
}
