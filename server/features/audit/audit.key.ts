import {
  hash as oneShotHash,
  createHash,
  createHmac,
  createPrivateKey,
  createPublicKey,
  generateKeyPairSync,
  randomBytes,
} from 'node:crypto'
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

/** The keyed link of an event: HMAC-SHA256 over its hash (which covers its content and the previous hash). */
export function linkOf(hash: string, key: Buffer): string {
  return createHmac('sha256', key).update(hash, 'utf8').digest('hex')
}

const HEX64 = /^[0-9a-f]{64}$/

/**
 * `linkOf` with the key fixed, for checking many links: HMAC-SHA256 (RFC 2104) written out as its two SHA-256 over
 * the key's inner and outer pads, so that a link (over a 64-digit hex hash) costs two one-shot hashes into buffers made
 * once, not a new HMAC object. Any other text goes through `linkOf`. tests/unit/server/audit-key.test.ts compares it
 * with Node's HMAC and RFC 4231's test vectors.
 */
export function linkHasher(key: Buffer): (hash: string) => string {
  if (key.length > 64) return (hash) => linkOf(hash, key)
  const inner = Buffer.alloc(64 + 64, 0x36)
  const outer = Buffer.alloc(64 + 32, 0x5c)
  for (let i = 0; i < key.length; i++) {
    inner[i] ^= key[i]
    outer[i] ^= key[i]
  }
  return (hash) => {
    if (!HEX64.test(hash)) return linkOf(hash, key)
    inner.write(hash, 64, 'latin1')
    ;(oneShotHash('sha256', inner, 'buffer') as unknown as Buffer).copy(outer, 64)
    return oneShotHash('sha256', outer, 'hex')
  }
}
