import { readdirSync, readFileSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { describe, expect, it } from 'vitest'
import { ALARM_STATE_KINDS } from '../../../shared/domain/rules/alarm-states.ts'
import { AUDIT_ACTION_LABELS, AUDIT_ENTITY_LABELS, auditActionLabel } from '../../../shared/schemas/audit.ts'
import { SIGNATURE_MEANINGS } from '../../../shared/schemas/trip-tests.ts'
import { AUDIT_ENTITY_TYPES } from '../../../server/features/audit/audit.sites.ts'

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..')

function serverSources(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((d) =>
    d.isDirectory() ? serverSources(path.join(dir, d.name)) : d.name.endsWith('.ts') ? [path.join(dir, d.name)] : [],
  )
}

/** Every literal action code next to `action:` in a file that appends audit events. */
function writtenActionCodes(): Set<string> {
  const codes = new Set<string>()
  for (const file of serverSources(path.join(root, 'server'))) {
    const text = readFileSync(file, 'utf8')
    if (!text.includes('appendAudit') && !text.includes('applyDefinition')) continue
    for (const line of text.split('\n').filter((l) => /\baction: /.test(l)))
      for (const m of line.matchAll(/'([a-z_]+\.[a-z_]+)'/g)) codes.add(m[1])
  }
  return codes
}

describe('audit action labels (shared/schemas/audit.ts)', () => {
  it('name every action code the server writes, the ones built from a kind or meaning included', () => {
    const codes = writtenActionCodes()
    // a scan that finds nothing would pass vacuously; these codes are written by the sign-in and register services
    expect(codes).toContain('session.sign_in')
    expect(codes).toContain('limit.create')
    for (const kind of ALARM_STATE_KINDS) codes.add(`alarm_state.${kind}`)
    for (const meaning of SIGNATURE_MEANINGS) codes.add(`trip_test.${meaning}`)
    for (const decision of ['approve', 'reject']) codes.add(`test_deferral.${decision}`)
    const missing = [...codes].filter((c) => !(c in AUDIT_ACTION_LABELS))
    expect(missing).toEqual([])
  })

  it('shows a code without a label as the code', () => {
    expect(auditActionLabel('limit.create')).toBe('Limit created')
    expect(auditActionLabel('something.new')).toBe('something.new')
  })

  it('name every entity type that has a site rule', () => {
    expect(AUDIT_ENTITY_TYPES.filter((t) => !(t in AUDIT_ENTITY_LABELS))).toEqual([])
  })
})
