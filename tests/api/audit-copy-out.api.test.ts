import type pg from 'pg'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { copyOut } from '../../server/db/copy-out.ts'
import { useTestDb } from './helpers/test-db.ts'

// The chain walk reads each page of the audit chain with copyOut (docs/adr/0003-audit-hash-chain.md, "Verify"): the
// data of a COPY … TO STDOUT read off the connection's socket, which pg then gets back. The expected text is COPY's text
// format (PostgreSQL's manual, "COPY", "Text Format"): a row a line, columns separated by a tab.
const ctx = useTestDb({ seed: false })
let client: pg.PoolClient

beforeAll(async () => {
  client = await ctx.pool.connect()
})
afterAll(() => client.release())

const lines = (n: number, row: (g: number) => string) => Array.from({ length: n }, (_, i) => `${row(i + 1)}\n`).join('')

describe('copyOut', () => {
  it("answers a COPY's data whole, over many socket reads, from a buffer grown past its first guess", async () => {
    const data = await copyOut(
      client,
      "COPY (SELECT g, repeat('x', g % 300) FROM generate_series(1, 5000) g) TO STDOUT",
      16,
    )
    expect(data.toString('utf8')).toBe(lines(5000, (g) => `${g}\t${'x'.repeat(g % 300)}`))
    // the connection is pg's again
    expect((await client.query('SELECT 41 + 1 AS n')).rows).toEqual([{ n: 42 }])
  })

  it('skips the notices that come between the rows', async () => {
    await client.query(
      "CREATE FUNCTION pg_temp.noisy(g int) RETURNS int AS $$ BEGIN RAISE NOTICE 'row %', g; RETURN g; END $$ LANGUAGE plpgsql",
    )
    const data = await copyOut(client, 'COPY (SELECT pg_temp.noisy(g) FROM generate_series(1, 300) g) TO STDOUT')
    expect(data.toString('utf8')).toBe(lines(300, (g) => String(g)))
    expect((await client.query('SELECT 1 AS one')).rows).toEqual([{ one: 1 }])
  })

  it("rejects with PostgreSQL's error when the COPY fails midway, and the connection goes on", async () => {
    await expect(
      copyOut(client, 'COPY (SELECT 1 / (3000 - g) FROM generate_series(1, 5000) g) TO STDOUT'),
    ).rejects.toThrow('division by zero')
    expect((await client.query('SELECT 2 AS two')).rows).toEqual([{ two: 2 }])
  })
})
