// Reading a device's register map over Modbus TCP, read only (modbus-reader.ts), and decoding it
// (shared/domain/modbus-decode.ts). docs/reconciliation.md#live-devices.
import { decodeRegisters, registerBit, registerCount, scaleValue } from '../../../shared/domain/modbus-decode.ts'
import type { Observation } from '../../../shared/domain/reconcile.ts'
import type { ReadValue, RegisterMapEntry } from '../../../shared/schemas/reconciliation.ts'
import { ReadOnlyModbus } from './modbus-reader.ts'

/** Most registers one request reads (the protocol allows 125 for function codes 3 and 4). */
const MAX_BLOCK = 120

interface Block {
  functionCode: 3 | 4
  start: number
  count: number
  entries: RegisterMapEntry[]
}

/** Groups the map into few contiguous reads: entries whose registers touch or overlap share one request. */
export function planBlocks(map: readonly RegisterMapEntry[]): Block[] {
  const blocks: Block[] = []
  for (const fc of [3, 4] as const) {
    const list = map.filter((e) => e.functionCode === fc).sort((a, b) => a.address - b.address)
    let cur: Block | null = null
    for (const e of list) {
      const end = e.address + registerCount(e.dataType)
      if (cur && e.address <= cur.start + cur.count && end - cur.start <= MAX_BLOCK) {
        cur.count = Math.max(cur.count, end - cur.start)
        cur.entries.push(e)
      } else {
        cur = { functionCode: fc, start: e.address, count: end - e.address, entries: [e] }
        blocks.push(cur)
      }
    }
  }
  return blocks
}

export interface DeviceReading {
  reachable: boolean
  error: string | null
  values: ReadValue[]
}

const isModbusException = (err: unknown) => err instanceof Error && /Modbus exception/i.test(err.message)

/**
 * Reads every entry of the map. A device that refuses the connection or does not answer within `timeoutMs` is
 * unreachable (the reading stops at the first silence, so one dead device never holds a run up for longer than
 * about twice its timeout). A Modbus exception answer to one read marks only that read's entries.
 */
export async function readDevice(
  source: { host: string; port: number; unitId: number; timeoutMs: number },
  map: readonly RegisterMapEntry[],
): Promise<DeviceReading> {
  let conn: ReadOnlyModbus
  try {
    conn = await ReadOnlyModbus.connect(source.host, source.port, source.unitId, source.timeoutMs)
  } catch (err) {
    return { reachable: false, error: `No connection to ${source.host}:${source.port}: ${message(err)}`, values: [] }
  }
  const values: Decoded[] = []
  try {
    for (const b of planBlocks(map)) {
      let regs: number[] | null = null
      let error: string | null = null
      try {
        regs = await conn.read(b.functionCode, b.start, b.count)
      } catch (err) {
        if (!isModbusException(err))
          return {
            reachable: false,
            error: `${source.host}:${source.port} unit ${source.unitId} did not answer: ${message(err)}`,
            values: [],
          }
        error = message(err)
      }
      for (const e of b.entries) values.push(decodeEntry(e, regs ? regs.slice(e.address - b.start) : null, error))
    }
  } finally {
    await conn.close()
  }
  const order = new Map(map.map((e, i) => [e, i]))
  values.sort((a, b) => (order.get(a.entry) ?? 0) - (order.get(b.entry) ?? 0))
  return { reachable: true, error: null, values: values.map(({ entry: _e, ...v }) => v) }
}

type Decoded = ReadValue & { entry: RegisterMapEntry }

function decodeEntry(e: RegisterMapEntry, regs: number[] | null, error: string | null): Decoded {
  const base = {
    entry: e,
    tag: e.tag,
    attribute: e.attribute,
    functionCode: e.functionCode,
    address: e.address,
    unit: e.unit,
  }
  if (!regs) return { ...base, raw: [], value: null, error }
  const raw = regs.slice(0, registerCount(e.dataType))
  try {
    if (e.bit !== null) return { ...base, raw, value: registerBit(raw[0], e.bit) ? '1' : '0', error: null }
    const n = decodeRegisters(raw, e.dataType, e.wordOrder)
    return { ...base, raw, value: scaleValue(n, e.scale, e.dataType), error: null }
  } catch (err) {
    return { ...base, raw, value: null, error: message(err) }
  }
}

/** Decoded values as observations for the comparison (flags as 1/0, floats marked, the entry's tolerance). */
export function observationsOf(values: readonly ReadValue[], map: readonly RegisterMapEntry[]): Observation[] {
  const out: Observation[] = []
  for (const v of values) {
    if (v.value === null) continue
    const e = map.find((m) => m.tag === v.tag && m.attribute === v.attribute && m.address === v.address)
    out.push({
      tag: v.tag,
      attribute: v.attribute,
      value: v.value,
      unit: v.unit,
      float: e?.dataType === 'float32',
      tolerance: e?.tolerance ?? null,
    })
  }
  return out
}

function message(err: unknown) {
  return err instanceof Error ? err.message : String(err)
}
