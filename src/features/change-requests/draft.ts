import type { ChangeItemDto, ChangeRequestDto } from '@shared/schemas/change-requests.ts'
import type { Limit } from '@shared/schemas/register.ts'
import type { ChangeItemBody, InstrumentRecord } from './api'
import { fieldSpec, orderedKeys } from './format'

export type ItemKind = ChangeItemDto['kind']

/** One item of the change form as the user edits it. */
export interface ItemDraft {
  key: number
  kind: ItemKind
  limitId: number | null
  instrumentId: number | null
  /** The fields chosen to change (modify and instrument items). */
  fields: string[]
  /** New values as edited: text for numbers and lists, booleans, option values. */
  values: Record<string, any>
  /** The record as it is now, for the current values shown beside each field. */
  limit: Limit | null
  instrument: InstrumentRecord | null
}

let nextKey = 1
export function newDraft(kind: ItemKind, init: Partial<ItemDraft> = {}): ItemDraft {
  return {
    key: nextKey++,
    kind,
    limitId: null,
    instrumentId: null,
    fields: [],
    values: {},
    limit: null,
    instrument: null,
    ...init,
  }
}

/** A stored value as the form edits it. */
export function toEditValue(key: string, v: unknown): unknown {
  const spec = fieldSpec(key)
  if (spec?.input === 'number') return v === null || v === undefined ? '' : String(v)
  if (spec?.input === 'list') return Array.isArray(v) ? v.join('\n') : ''
  if (spec?.input === 'bool') return Boolean(v)
  return v ?? (spec?.input === 'select' ? null : '')
}

/**
 * An edited value as the API takes it (numbers as numbers; a non-number is sent as typed so the server names the
 * problem).
 */
export function toApiValue(key: string, v: unknown): unknown {
  const spec = fieldSpec(key)
  if (spec?.input === 'number') {
    const t = String(v ?? '').trim()
    if (t === '') return spec.optional ? null : ''
    const n = Number(t)
    return Number.isFinite(n) ? n : t
  }
  if (spec?.input === 'list')
    return String(v ?? '')
      .split('\n')
      .map((s) => s.trim())
      .filter(Boolean)
  if (spec?.input === 'text' || spec?.input === 'textarea') return String(v ?? '').trim()
  return v
}

/** The current value of a field on the record the item changes. */
export function currentValue(item: ItemDraft, key: string): unknown {
  const rec = (item.kind === 'instrument' ? item.instrument : item.limit) as Record<string, unknown> | null
  return rec ? rec[key] : undefined
}

/**
 * The item as the API takes it, before the schema's check: its limit or instrument left out while not chosen (the
 * check names the missing target).
 */
export function toItemBody(item: ItemDraft): Partial<ChangeItemBody> & { kind: ItemKind } {
  const changes = Object.fromEntries(item.fields.map((f) => [f, toApiValue(f, item.values[f])]))
  if (item.kind === 'instrument') return { kind: 'instrument', instrumentId: item.instrumentId ?? undefined, changes }
  const limitId = item.limitId ?? undefined
  return item.kind === 'modify' ? { kind: 'modify', limitId, changes } : { kind: item.kind, limitId }
}

/** A stored item turned back into a draft (editing a request). */
export function fromItemDto(i: ChangeItemDto): ItemDraft {
  const editable = i.kind === 'modify' || i.kind === 'instrument'
  const fields = editable ? orderedKeys(i.changes) : []
  return newDraft(i.kind, {
    limitId: i.limitId,
    instrumentId: i.instrumentId,
    fields,
    values: Object.fromEntries(fields.map((f) => [f, toEditValue(f, i.changes[f].to)])),
  })
}

/**
 * The items of a reversal, restoring what a temporary change set (docs/change-requests.md#expired-temporary-changes):
 * each changed field back to its former value, a limit it put in service retired. A limit it retired cannot be put
 * back by a change request (it is registered again), so it has no item here.
 */
export function reversalDrafts(temp: Pick<ChangeRequestDto, 'items'>): ItemDraft[] {
  return temp.items.flatMap((i): ItemDraft[] => {
    if (i.kind === 'create') return [newDraft('retire', { limitId: i.limitId })]
    if (i.kind === 'retire') return []
    const fields = orderedKeys(i.changes)
    return [
      newDraft(i.kind, {
        limitId: i.limitId,
        instrumentId: i.instrumentId,
        fields,
        values: Object.fromEntries(fields.map((f) => [f, toEditValue(f, i.changes[f].from)])),
      }),
    ]
  })
}

/** How a device field is read back: typed, chosen, or (for a whole signal definition) confirmed. */
export function readBackInput(key: string): 'number' | 'select' | 'bool' | 'text' | 'confirm' {
  if (key === 'signal') return 'confirm'
  const spec = fieldSpec(key)
  if (spec?.input === 'number') return 'number'
  if (spec?.input === 'bool') return 'bool'
  if (spec?.input === 'select') return 'select'
  return 'text'
}

/** The read-back as the API takes it: what the technician entered, typed like the approved value. */
export function toReadBack(item: ChangeItemDto, values: Record<string, any>): Record<string, unknown> {
  const out: Record<string, unknown> = {}
  for (const key of item.deviceFields) {
    const v = values[key]
    const how = readBackInput(key)
    if (how === 'confirm') {
      if (v === true) out[key] = item.changes[key].to
    } else if (how === 'number') {
      // sent as typed: the server compares exact decimals, which a binary number could round
      const t = String(v ?? '').trim()
      if (t !== '') out[key] = t
    } else if (v !== null && v !== undefined && v !== '') {
      out[key] = how === 'text' ? String(v).trim() : v
    }
  }
  return out
}
