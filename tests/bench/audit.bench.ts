// `npm run bench:audit`: what the audit trail costs a business transaction, and how fast the chain verifies.
// Starts a throwaway PostgreSQL cluster (as `npm run bench:register` does), seeds the demo plant and a key file of its
// own, then:
// 1. Writers: 8 concurrent writers run a business transaction of the register (lock a limit row, update it, insert
//    its revision) for BENCH_SECONDS seconds without its audit event and as long with it (appendAudit as the app
//    calls it), in alternating halves so both see the same machine; the sealer job runs beside the audited halves as
//    it does in the app (every SEAL_INTERVAL_SECONDS, batches until none is full). Target (issue 13): audited at
//    >= 60 % of the unaudited transactions per second.
// 2. Verifier: BENCH_EVENTS events (limit updates with their before and after values) are written and sealed, the
//    table vacuumed (VACUUM (ANALYZE), as autovacuum or an earlier walk leaves rows in a running installation; the
//    first read of freshly sealed rows costs PostgreSQL more once), then verifyAuditChain walks them (pages checked by
//    worker threads, one per CPU). Target: >= 200,000 events/s. The CPU printed is this process's, all threads, and
//    then PostgreSQL's meanwhile (its server and backends, from /proc).
// Prints figures and PASS/FAIL; exit code 0 either way, non-zero only when the benchmark itself fails. Not part of
// `npm test`.
//
// Knobs: BENCH_SECONDS (10 per mode), BENCH_WRITERS (8), BENCH_EVENTS (200000).
import { readdirSync, readFileSync } from 'node:fs'
import { mkdtemp, rm } from 'node:fs/promises'
import os from 'node:os'
import path from 'node:path'
import { performance } from 'node:perf_hooks'
import { setTimeout as sleep } from 'node:timers/promises'
import { execFileSync } from 'node:child_process'
import { sql } from 'kysely'
import { systemClock } from '../../server/clock.ts'
import { createDb, type Db } from '../../server/db/index.ts'
import { createAuditKeyFile } from '../../server/features/audit/audit.key.ts'
import { createAuditSealJob } from '../../server/features/audit/audit.sealer.ts'
import { runAsScript, seedDemoPlant, startCluster } from './harness.ts'

const DURATION_MS = Number(process.env.BENCH_SECONDS ?? 10) * 1000
const WRITERS = Number(process.env.BENCH_WRITERS ?? 8)
const EVENTS = Number(process.env.BENCH_EVENTS ?? 200_000)
const TARGET_RATIO = 0.6
const TARGET_VERIFY = 200_000

const verdict = (ok: boolean) => (ok ? 'PASS' : 'FAIL')

/** The figures a design under test offers: how to append, how to seal (if it seals apart), how to verify. */
interface Design {
  appendAudit: typeof import('../../server/features/audit/audit.repository.ts').appendAudit
  verifyAuditChain: typeof import('../../server/features/audit/audit.repository.ts').verifyAuditChain
  /** Seals what waits; answers the number sealed. Absent when the append links the event itself. */
  sealOnce?: (db: Db) => Promise<number>
}

async function loadDesign(): Promise<Design> {
  const repo = (await import('../../server/features/audit/audit.repository.ts')) as Record<string, unknown>
  const seal = repo.sealAuditEvents as ((db: Db, clock: typeof systemClock) => Promise<{ sealed: number }>) | undefined
  return {
    appendAudit: repo.appendAudit as Design['appendAudit'],
    verifyAuditChain: repo.verifyAuditChain as Design['verifyAuditChain'],
    sealOnce: seal ? async (db) => (await seal(db, systemClock)).sealed : undefined,
  }
}

/** The business transaction: lock a limit, change its description and revision, insert the revision row. */
async function businessTransaction(db: Db, design: Design, limitId: number, audited: boolean, n: number) {
  await db.transaction().execute(async (trx) => {
    const before = await trx
      .selectFrom('limit_function')
      .select(['id', 'tag', 'setpoint', 'deadband', 'revision', 'description', 'status'])
      .where('id', '=', limitId)
      .forUpdate()
      .executeTakeFirstOrThrow()
    const now = systemClock.now()
    const after = { ...before, description: `Benchmark change ${n}`, revision: before.revision + 1 }
    await trx
      .updateTable('limit_function')
      .set({ description: after.description, revision: after.revision, updated_at: now })
      .where('id', '=', limitId)
      .execute()
    await trx
      .insertInto('limit_revision')
      .values({
        limit_id: limitId,
        revision: after.revision,
        snapshot: JSON.stringify(after),
        changed_by: null,
        changed_at: now,
        change_request_id: null,
        reason: 'benchmark',
      })
      .execute()
    if (audited)
      await design.appendAudit(
        trx,
        systemClock,
        { actorId: null, requestId: `bench:${n}`, ip: '127.0.0.1' },
        { action: 'limit.update', entityType: 'Limit', entityId: limitId, before, after, reason: 'benchmark' },
      )
  })
}

/** WRITERS loops for `ms`; answers the transactions committed. */
async function drive(db: Db, design: Design, limitIds: number[], audited: boolean, ms: number): Promise<number> {
  const end = performance.now() + ms
  let done = 0
  await Promise.all(
    Array.from({ length: WRITERS }, async () => {
      while (performance.now() < end) {
        const id = limitIds[Math.floor(Math.random() * limitIds.length)]
        await businessTransaction(db, design, id, audited, done)
        done++
      }
    }),
  )
  return done
}

/**
 * The sealer as the app runs it (server/index.ts): the job `audit.seal` every SEAL_INTERVAL_SECONDS, each run sealing
 * batches until none is full.
 */
function runSealer(db: Db, design: Design) {
  const stop = new AbortController()
  let sealed = 0
  const job = createAuditSealJob(db, systemClock)
  const stopped = new Promise((r) => stop.signal.addEventListener('abort', r, { once: true }))
  const loop = (async () => {
    if (!design.sealOnce) return
    while (!stop.signal.aborted) {
      const started = performance.now()
      sealed += (await job.runDue(systemClock.now(), stop.signal)).sealed
      const wait = job.intervalSec * 1000 - (performance.now() - started)
      if (wait > 0) await Promise.race([stopped, sleep(wait)])
    }
  })()
  return {
    async stop() {
      stop.abort()
      await loop
      return sealed
    },
  }
}

/** The first column of the first row of a statement run as the superuser; null when it fails. */
async function superQuery(url: string, statement: string): Promise<string | null> {
  const { db } = createDb(url, 1)
  try {
    const r = await sql.raw<Record<string, string>>(statement).execute(db)
    return Object.values(r.rows[0] ?? {})[0] ?? null
  } catch {
    return null
  } finally {
    await db.destroy()
  }
}

async function unsealed(db: Db): Promise<number> {
  const r = await db
    .selectFrom('audit_event')
    .select((eb) => eb.fn.countAll<string>().as('n'))
    .where('seq', 'is', null)
    .executeTakeFirst()
    .catch(() => ({ n: '0' }))
  return Number(r?.n ?? 0)
}

/**
 * CPU seconds used so far by the PostgreSQL server whose data directory is `dataDir`: the postmaster, its children (the
 * backends) and those it has reaped, from /proc (Linux; clock ticks of 1/100 s). Null where they cannot be read.
 */
function serverCpuSeconds(dataDir: string): number | null {
  try {
    const postmaster = String(Number(readFileSync(path.join(dataDir, 'postmaster.pid'), 'utf8').split('\n')[0]))
    // fields after the command's closing parenthesis: state, ppid, ..., utime (12th), stime (13th), and the CPU of the
    // children it has reaped (14th, 15th)
    const fields = (pid: string) => {
      const stat = readFileSync(`/proc/${pid}/stat`, 'utf8')
      return stat.slice(stat.lastIndexOf(')') + 2).split(' ')
    }
    const reaped = (f: string[]) => Number(f[13]) + Number(f[14])
    // the backends' own CPU and the postmaster's, with its reaped children's: a backend reaped while the backends are
    // read would count twice or not at all, so the reading is made again until no backend was reaped meanwhile
    for (let attempt = 0; attempt < 10; attempt++) {
      const before = fields(postmaster)
      let ticks = 0
      for (const entry of readdirSync('/proc')) {
        if (!/^\d+$/.test(entry) || entry === postmaster) continue
        try {
          const f = fields(entry)
          if (f[1] === postmaster) ticks += Number(f[11]) + Number(f[12])
        } catch {
          // ended and reaped meanwhile: the postmaster's reaped CPU changes, and the reading is made again
        }
      }
      const after = fields(postmaster)
      if (reaped(after) === reaped(before)) return (ticks + Number(after[11]) + Number(after[12]) + reaped(after)) / 100
    }
    return null
  } catch {
    return null
  }
}

/** CPU seconds used so far by this process's main thread (Linux, /proc; clock ticks of 1/100 s), null elsewhere. */
function mainThreadCpuSeconds(): number | null {
  try {
    const stat = readFileSync(`/proc/self/task/${process.pid}/stat`, 'utf8')
    const f = stat.slice(stat.lastIndexOf(')') + 2).split(' ')
    return (Number(f[11]) + Number(f[12])) / 100
  } catch {
    return null
  }
}

async function main() {
  console.log(
    `Audit chain benchmark: ${WRITERS} writers, ${DURATION_MS / 1000} s per mode, ${EVENTS.toLocaleString('en')} events to verify (${os.cpus().length} CPUs, Node ${process.version})`,
  )
  console.log(`  load before: ${execFileSync('uptime').toString().trim()}`)
  const keyDir = await mkdtemp(path.join(os.tmpdir(), 'limitkeeper-bench-key-'))
  process.env.AUDIT_KEY_FILE = path.join(keyDir, 'audit-key.json')
  createAuditKeyFile(process.env.AUDIT_KEY_FILE)
  const cluster = await startCluster()
  try {
    await seedDemoPlant(cluster.ownerUrl)
    const design = await loadDesign()
    const { db } = createDb(cluster.appUrl, WRITERS + 2)
    try {
      if (design.sealOnce) while ((await design.sealOnce(db)) > 0);
      const limitIds = (await db.selectFrom('limit_function').select('id').execute()).map((r) => r.id)
      console.log(`  ${limitIds.length} limits of the demo plant, picked at random by each writer`)

      // warm-up, then alternating halves
      await drive(db, design, limitIds, false, 1000)
      await drive(db, design, limitIds, true, 1000)
      let plain = 0
      let audited = 0
      let sealedAlongside = 0
      const half = DURATION_MS / 2
      for (let round = 0; round < 2; round++) {
        plain += await drive(db, design, limitIds, false, half)
        const sealer = runSealer(db, design)
        audited += await drive(db, design, limitIds, true, half)
        sealedAlongside += await sealer.stop()
      }
      const plainRate = plain / (DURATION_MS / 1000)
      const auditedRate = audited / (DURATION_MS / 1000)
      const ratio = auditedRate / plainRate
      console.log(`  without audit event   ${plainRate.toFixed(0).padStart(7)} transactions/s`)
      console.log(`  with audit event      ${auditedRate.toFixed(0).padStart(7)} transactions/s`)
      if (design.sealOnce) {
        const waiting = await unsealed(db)
        const t = performance.now()
        while ((await design.sealOnce(db)) > 0);
        console.log(
          `  sealer alongside: ${sealedAlongside.toLocaleString('en')} events sealed while writing; ${waiting} waiting at the end, sealed in ${((performance.now() - t) / 1000).toFixed(2)} s`,
        )
      }
      console.log(
        `  ratio ${(ratio * 100).toFixed(0)} % (target >= ${TARGET_RATIO * 100} %)   ${verdict(ratio >= TARGET_RATIO)}`,
      )

      // the verifier on EVENTS more events
      let t = performance.now()
      const batch = 1000
      for (let i = 0; i < EVENTS; i += batch) {
        const entries = Array.from({ length: Math.min(batch, EVENTS - i) }, (_, k) => {
          const id = limitIds[(i + k) % limitIds.length]
          return {
            action: 'limit.update',
            entityType: 'Limit' as const,
            entityId: id,
            before: { id, tag: `TZA-${id}`, setpoint: '412.5', deadband: '2', revision: i + k, status: 'active' },
            after: { id, tag: `TZA-${id}`, setpoint: '415', deadband: '2', revision: i + k + 1, status: 'active' },
            reason: 'benchmark',
          }
        })
        await db
          .transaction()
          .execute((trx) =>
            design.appendAudit(trx, systemClock, { actorId: null, requestId: 'bench:bulk', ip: null }, entries),
          )
      }
      const written = performance.now() - t
      let sealMs = 0
      if (design.sealOnce) {
        t = performance.now()
        while ((await design.sealOnce(db)) > 0);
        sealMs = performance.now() - t
      }
      console.log(
        `  ${EVENTS.toLocaleString('en')} events written in ${(written / 1000).toFixed(2)} s${design.sealOnce ? `, sealed in ${(sealMs / 1000).toFixed(2)} s (${Math.round(EVENTS / (sealMs / 1000)).toLocaleString('en')} events/s)` : ''}`,
      )
      // the freshly sealed rows as a walk finds them once read before or vacuumed (every walk after the first, and
      // autovacuum, in a running installation): the first read of a row just written sets its hint bits and prunes the
      // versions the sealer replaced, a one-off cost of PostgreSQL's, not of the walk
      t = performance.now()
      const owner = createDb(cluster.ownerUrl, 1).db
      try {
        await sql`VACUUM (ANALYZE) audit_event`.execute(owner)
      } finally {
        await owner.destroy()
      }
      console.log(`  VACUUM (ANALYZE) audit_event before verifying: ${((performance.now() - t) / 1000).toFixed(2)} s`)
      console.log(`  load before verifying: ${execFileSync('uptime').toString().trim()}`)
      const dataDir = await superQuery(cluster.superUrl, 'SHOW data_directory')
      const server0 = dataDir ? serverCpuSeconds(dataDir) : null
      t = performance.now()
      const cpu0 = process.cpuUsage()
      const main0 = mainThreadCpuSeconds()
      const r = await design.verifyAuditChain(db)
      const verifyMs = performance.now() - t
      const cpu = process.cpuUsage(cpu0)
      const main1 = mainThreadCpuSeconds()
      const server1 = dataDir ? serverCpuSeconds(dataDir) : null
      if (!r.ok) throw new Error(`the chain does not verify: ${r.badId} ${r.problem}`)
      const rate = r.checked / (verifyMs / 1000)
      console.log(
        `  verify: ${r.checked.toLocaleString('en')} events in ${(verifyMs / 1000).toFixed(2)} s = ${Math.round(rate).toLocaleString('en')} events/s (target >= ${TARGET_VERIFY.toLocaleString('en')})   ${verdict(rate >= TARGET_VERIFY)}`,
      )
      // the CPU this process spent: wall time well above it means the machine was busy with other work
      const nodeCpu = (cpu.user + cpu.system) / 1e6
      console.log(
        `  verify used ${nodeCpu.toFixed(2)} s of this process's CPU, all threads (${Math.round(r.checked / nodeCpu).toLocaleString('en')} events per CPU second, ${((nodeCpu * 1e6) / r.checked).toFixed(1)} us per event)`,
      )
      // the main thread reads the pages off the sockets; the worker threads check them
      if (main0 !== null && main1 !== null)
        console.log(
          `    of which the main thread ${(((main1 - main0) * 1e6) / r.checked).toFixed(1)} us per event, the other threads (the page checks) ${(((nodeCpu - (main1 - main0)) * 1e6) / r.checked).toFixed(1)} us`,
        )
      // PostgreSQL's share runs on the same two cores: with it, the CPU the walk costs the machine
      if (server0 !== null && server1 !== null) {
        const pgCpu = server1 - server0
        console.log(
          `  PostgreSQL used ${pgCpu.toFixed(2)} s of CPU meanwhile (${((pgCpu * 1e6) / r.checked).toFixed(1)} us per event); both: ${(((nodeCpu + pgCpu) * 1e6) / r.checked).toFixed(1)} us per event`,
        )
      }
    } finally {
      await db.destroy()
    }
  } finally {
    await cluster.stop()
    await rm(keyDir, { recursive: true, force: true })
  }
  console.log(`  load after: ${execFileSync('uptime').toString().trim()}`)
}

runAsScript(import.meta.url, main)
