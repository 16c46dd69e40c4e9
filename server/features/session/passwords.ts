import argon2 from 'argon2'

// Argon2id at OWASP's password-storage minimum (m = 19 MiB, t = 2, p = 1; OWASP Password Storage Cheat Sheet).
const OPTIONS = { type: argon2.argon2id, memoryCost: 19_456, timeCost: 2, parallelism: 1 } as const

/** Hashes a password with Argon2id. */
export function hashPassword(password: string): Promise<string> {
  return argon2.hash(password, OPTIONS)
}

// A hash of a random password, verified against when the account does not exist, so both paths cost the same.
let dummyHash: Promise<string> | null = null

/** Verifies a password; with no stored hash it still spends the same time and answers false. */
export async function verifyPassword(hash: string | null, password: string): Promise<boolean> {
  if (!hash) {
    dummyHash ??= hashPassword('no-such-account-' + Math.random())
    await argon2.verify(await dummyHash, password).catch(() => false)
    return false
  }
  return argon2.verify(hash, password).catch(() => false)
}
