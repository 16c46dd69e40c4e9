import { createHmac, randomBytes } from 'node:crypto'
import { describe, expect, it } from 'vitest'
import { linkHasher, linkOf } from '../../../server/features/audit/audit.key.ts'

// The keyed link is HMAC-SHA256 (RFC 2104). linkHasher writes it out as two SHA-256 over the key's pads; it must give
// what Node's HMAC (OpenSSL) gives, and both what RFC 4231 publishes.
describe('keyed links', () => {
  it('RFC 4231 test case 2: HMAC-SHA256 with key "Jefe" over "what do ya want for nothing?"', () => {
    const key = Buffer.from('Jefe')
    const expected = '5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843' // RFC 4231 §4.3
    expect(linkOf('what do ya want for nothing?', key)).toBe(expected)
    expect(linkHasher(key)('what do ya want for nothing?')).toBe(expected)
  })

  it("gives Node's HMAC-SHA256 for hex hashes under keys of every length up to a block and beyond", () => {
    for (const length of [1, 4, 31, 32, 33, 63, 64, 65, 100]) {
      const key = randomBytes(length)
      const link = linkHasher(key)
      for (let i = 0; i < 20; i++) {
        const hash = randomBytes(32).toString('hex')
        expect(link(hash)).toBe(createHmac('sha256', key).update(hash, 'utf8').digest('hex'))
        // a digest just computed, not checked again
        expect(link(hash, true)).toBe(createHmac('sha256', key).update(hash, 'utf8').digest('hex'))
      }
      // anything else (a tampered hash: upper case, too short, not ASCII) goes through the HMAC object
      for (const odd of ['', 'AB'.repeat(32), 'ä'.repeat(64), '0'.repeat(63)])
        expect(link(odd)).toBe(createHmac('sha256', key).update(odd, 'utf8').digest('hex'))
    }
  })
})
