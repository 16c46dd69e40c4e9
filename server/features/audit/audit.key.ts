import { createHash, createPrivateKey, createPublicKey, generateKeyPairSync, randomBytes } from 'node:crypto'
import type { KeyObject } from 'node:crypto'
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { logger } from '../../logger.ts'

/**
 * The audit key: a file outside the database and the repository (AUDIT_KEY_FILE, by default .data/audit-key.json)
 * holding the secret of the keyed links (HMAC-SHA256) and the Ed25519 private key that signs checkpoints of the chain
 * head. The database never holds either, so its credentials, even a superuser's, are not enough to forge an event
 * that verifies (docs/security.md, "Audit trail integrity").
 */
export interface AuditKeys {
  file: string
  /** Only the linking step uses it (appendAudit and the verifier). */
  linkKey: Buffer
  signingKey: KeyObject
  publicKey: KeyObject
  /** First 16 hex digits of the SHA-256 of the public key (DER): names the key a checkpoint was signed with. */
  keyId: string
}

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..')

export function auditKeyPath(env: NodeJS.ProcessEnv = process.env): string {
  return path.resolve(env.AUDIT_KEY_FILE || path.join(root, '.data/audit-key.json'))
}

/** Writes a new key file (mode 0600); refuses to overwrite one. */
export function createAuditKeyFile(file: string): void {
  mkdirSync(path.dirname(file), { recursive: true, mode: 0o700 })
  const { privateKey } = generateKeyPairSync('ed25519')
  const body = {
    version: 1,
    linkKey: randomBytes(32).toString('base64'),
    signingKey: privateKey.export({ format: 'pem', type: 'pkcs8' }).toString(),
  }
  writeFileSync(file, `${JSON.stringify(body, null, 2)}\n`, { mode: 0o600, flag: 'wx' })
}

const cache = new Map<string, AuditKeys>()

/** Reads the key file (once per path); a missing or damaged file is an error naming it. */
export function loadAuditKeys(file: string = auditKeyPath()): AuditKeys {
  const hit = cache.get(file)
  if (hit) return hit
  // the local cluster's key (.data/, like the cluster itself) is made on first use outside production; a key file
  // named by AUDIT_KEY_FILE, or any key in production, must exist
  if (
    !existsSync(file) &&
    !process.env.AUDIT_KEY_FILE &&
    process.env.NODE_ENV !== 'production' &&
    file === auditKeyPath()
  ) {
    createAuditKeyFile(file)
    logger.warn({ file }, 'audit key file created for the local cluster; keep a production key outside the database')
  }
  let parsed: { version?: number; linkKey?: string; signingKey?: string }
  try {
    parsed = JSON.parse(readFileSync(file, 'utf8'))
  } catch (err) {
    const why = (err as { code?: string }).code === 'ENOENT' ? 'does not exist' : 'cannot be read'
    throw new Error(
      `The audit key file ${file} ${why}. Set AUDIT_KEY_FILE to the key file (npm start creates one on its first run).`,
    )
  }
  const linkKey = Buffer.from(parsed.linkKey ?? '', 'base64')
  if (parsed.version !== 1 || linkKey.length < 32 || !parsed.signingKey)
    throw new Error(`The audit key file ${file} is not a Limitkeeper audit key file.`)
  const signingKey = createPrivateKey(parsed.signingKey)
  if (signingKey.asymmetricKeyType !== 'ed25519') throw new Error(`The audit key file ${file} holds no Ed25519 key.`)
  const publicKey = createPublicKey(signingKey)
  const keyId = createHash('sha256')
    .update(publicKey.export({ format: 'der', type: 'spki' }))
    .digest('hex')
    .slice(0, 16)
  const keys = { file, linkKey, signingKey, publicKey, keyId }
  cache.set(file, keys)
  return keys
}

// the keyed link itself is computed in audit.hash.ts (free of the logger, for the verifier's worker threads)
export { linkHasher, linkOf } from './audit.hash.ts'
