import { describe, expect, it } from 'vitest'
import { IdSchema, inputProblem, MAX_ID, TextSchema, textProblem } from '../../../shared/schemas/common.ts'

// PostgreSQL's integer is 4 bytes, -2147483648 to +2147483647 (PostgreSQL manual, 8.1.1 Integer Types).
describe('IdSchema', () => {
  it('accepts 1 to 2^31 - 1 and refuses what an int4 column cannot hold', () => {
    expect(MAX_ID).toBe(2 ** 31 - 1)
    expect(IdSchema.parse('2147483647')).toBe(2147483647)
    expect(IdSchema.safeParse('2147483648').success).toBe(false)
    expect(IdSchema.safeParse('0').success).toBe(false)
    expect(IdSchema.safeParse('1.5').success).toBe(false)
  })
})

// NUL is refused by PostgreSQL's text type ("invalid byte sequence for encoding UTF8: 0x00"); a lone surrogate
// is not a Unicode scalar value and has no UTF-8 encoding (The Unicode Standard, 3.9 D76 and D92).
describe('text that can be stored', () => {
  it('refuses NUL and lone surrogates, keeps surrogate pairs and ordinary text', () => {
    expect(textProblem('plain text, ÄÖÜ, 温度')).toBeNull()
    expect(textProblem('emoji \ud83d\ude00')).toBeNull()
    expect(textProblem('a\u0000b')).toMatch(/NUL/)
    expect(textProblem('\ud800')).toMatch(/surrogate/)
    expect(textProblem('x\udc00')).toMatch(/surrogate/)
    expect(textProblem('\ude00\ud83d')).toMatch(/surrogate/)
    expect(TextSchema.safeParse('ok').success).toBe(true)
    expect(TextSchema.safeParse('bad\u0000').success).toBe(false)
  })

  it('finds the first problem anywhere in a value, keys included, without recursion', () => {
    expect(inputProblem({ a: [{ b: 'fine' }] })).toBeNull()
    expect(inputProblem({ a: [{ b: 'x\u0000' }] })).toEqual({ path: 'a.0.b', message: expect.stringMatching(/NUL/) })
    expect(inputProblem({ ['k\ud800']: 1 })?.message).toMatch(/surrogate/)
    let v: unknown = 'leaf'
    for (let i = 0; i < 100_000; i++) v = { v }
    expect(inputProblem(v)?.message).toBe('Nested deeper than 32 levels')
    let ok: unknown = 'leaf'
    for (let i = 0; i < 31; i++) ok = [ok]
    expect(inputProblem(ok)).toBeNull()
  })
})
