// The demo plant's reconciliation sources: three limit controllers read over Modbus TCP (served by the simulated
// device, server/dev/modbus-sim.ts) and one configuration-export source waiting for its first upload. The device
// images below are what the invented controllers hold; two differ from the register on purpose (marked).
import type { Kysely } from 'kysely'
import { RegisterMapSchema, type RegisterMapEntry } from '../../shared/schemas/reconciliation.ts'
import type { Clock } from '../clock.ts'
import type { Database } from '../db/schema.ts'

type E = Omit<RegisterMapEntry, 'wordOrder' | 'scale' | 'unit' | 'bit' | 'tolerance'> & Partial<RegisterMapEntry>

export interface DemoDevice {
  site: 'FHR' | 'SMP'
  name: string
  description: string
  unitId: number
  map: RegisterMapEntry[]
  /** What the device holds, by `tag|attribute`, in the map entry's unit. */
  values: Record<string, string>
}

const entries = (list: E[]) => RegisterMapSchema.parse(list)

// H-101 bridgewall limiter: 16-bit registers scaled by 0.1 °C, flags in a status word (bit 0 latching, 1 enabled,
// 2 bypass/maintenance), holding registers (function code 3)
const int16Controller = (tag: string, base: number): E[] => [
  { tag, attribute: 'setpoint', functionCode: 3, address: base, dataType: 'int16', scale: '0.1', unit: '°C' },
  { tag, attribute: 'deadband', functionCode: 3, address: base + 1, dataType: 'int16', scale: '0.1', unit: '°C' },
  { tag, attribute: 'onDelaySec', functionCode: 3, address: base + 2, dataType: 'uint16', unit: 's' },
  { tag, attribute: 'offDelaySec', functionCode: 3, address: base + 3, dataType: 'uint16', unit: 's' },
  { tag, attribute: 'latching', functionCode: 3, address: base + 4, dataType: 'uint16', bit: 0 },
  { tag, attribute: 'enabled', functionCode: 3, address: base + 4, dataType: 'uint16', bit: 1 },
  { tag, attribute: 'bypassed', functionCode: 3, address: base + 4, dataType: 'uint16', bit: 2 },
]
// H-220 outlet limiter: float32, low word first, input registers (function code 4)
const floatController = (tag: string, base: number): E[] => [
  {
    tag,
    attribute: 'setpoint',
    functionCode: 4,
    address: base,
    dataType: 'float32',
    wordOrder: 'low_first',
    unit: '°C',
  },
  {
    tag,
    attribute: 'deadband',
    functionCode: 4,
    address: base + 2,
    dataType: 'float32',
    wordOrder: 'low_first',
    unit: '°C',
  },
  { tag, attribute: 'latching', functionCode: 4, address: base + 8, dataType: 'uint16', bit: 0 },
  { tag, attribute: 'enabled', functionCode: 4, address: base + 8, dataType: 'uint16', bit: 1 },
  { tag, attribute: 'bypassed', functionCode: 4, address: base + 8, dataType: 'uint16', bit: 2 },
]
// Thermal-oil heater limiter: int32, high word first, hundredths of °F (the register keeps °C), one register per flag
const int32Controller = (tag: string, base: number): E[] => [
  { tag, attribute: 'setpoint', functionCode: 3, address: base, dataType: 'int32', scale: '0.01', unit: '°F' },
  { tag, attribute: 'deadband', functionCode: 3, address: base + 2, dataType: 'int32', scale: '0.01', unit: '°F' },
  { tag, attribute: 'latching', functionCode: 3, address: base + 4, dataType: 'uint16' },
  { tag, attribute: 'enabled', functionCode: 3, address: base + 5, dataType: 'uint16' },
  { tag, attribute: 'bypassed', functionCode: 3, address: base + 6, dataType: 'uint16' },
]

export const DEMO_DEVICES: DemoDevice[] = [
  {
    site: 'FHR',
    name: 'H-101 bridgewall limiter',
    description: 'Panel-mounted temperature limiter of crude heater H-101 (TT-103), Modbus TCP gateway unit 1',
    unitId: 1,
    map: entries([...int16Controller('TSHH-103', 0), ...int16Controller('TAH-103', 10)]),
    values: {
      // DELIBERATE DIFFERENCE: the trip setpoint was raised on the device (register: 900 °C) with no change request
      'TSHH-103|setpoint': '910',
      'TSHH-103|deadband': '10',
      'TSHH-103|onDelaySec': '0',
      'TSHH-103|offDelaySec': '0',
      'TSHH-103|latching': '1',
      'TSHH-103|enabled': '1',
      'TSHH-103|bypassed': '0',
      'TAH-103|setpoint': '860',
      'TAH-103|deadband': '5',
      'TAH-103|onDelaySec': '0',
      'TAH-103|offDelaySec': '0',
      'TAH-103|latching': '0',
      'TAH-103|enabled': '1',
      'TAH-103|bypassed': '0',
    },
  },
  {
    site: 'FHR',
    name: 'H-220 outlet limiter',
    description: 'Latching temperature limiter of hydrotreater heater H-220 (TT-220A/B), gateway unit 2',
    unitId: 2,
    map: entries([...floatController('TSHH-220', 0), ...floatController('TAH-220', 20)]),
    values: {
      'TSHH-220|setpoint': '400',
      'TSHH-220|deadband': '5',
      'TSHH-220|latching': '1',
      'TSHH-220|enabled': '1',
      // DELIBERATE DIFFERENCE: the maintenance bypass flag is set, and no bypass of TSHH-220 is on record
      'TSHH-220|bypassed': '1',
      'TAH-220|setpoint': '385',
      'TAH-220|deadband': '3',
      'TAH-220|latching': '0',
      'TAH-220|enabled': '1',
      'TAH-220|bypassed': '0',
    },
  },
  {
    site: 'SMP',
    name: 'Thermal-oil heater limiter',
    description: 'Latching oil-outlet temperature limiter of the thermal-oil heater (TT-701A/B), gateway unit 3',
    unitId: 3,
    map: entries([...int32Controller('TSHH-701', 0), ...int32Controller('TAH-701', 10)]),
    // 318 °C = 604.4 °F, 310 °C = 590 °F, 5 K = 9 °F, 2 K = 3.6 °F (°F = °C × 1.8 + 32)
    values: {
      'TSHH-701|setpoint': '604.4',
      'TSHH-701|deadband': '9',
      'TSHH-701|latching': '1',
      'TSHH-701|enabled': '1',
      'TSHH-701|bypassed': '0',
      'TAH-701|setpoint': '590',
      'TAH-701|deadband': '3.6',
      'TAH-701|latching': '0',
      'TAH-701|enabled': '1',
      'TAH-701|bypassed': '0',
    },
  },
]

/**
 * Seeds the demo sources: the three devices at 127.0.0.1:`port` (the simulated device), due at once so the first
 * scheduled run finds the two deliberate differences, and an export source for the crude unit's control system.
 */
export async function seedDemoReconciliation(db: Kysely<Database>, clock: Clock, opts: { port: number }) {
  const now = clock.now()
  const sites = await db.selectFrom('site').select(['id', 'code']).execute()
  const siteId = (code: string) => sites.find((s) => s.code === code)!.id
  const engineer = await db
    .selectFrom('app_user')
    .select('id')
    .where('email', '=', 'engineer@fernhollow.example')
    .executeTakeFirst()
  for (const d of DEMO_DEVICES) {
    await db
      .insertInto('reconciliation_source')
      .values({
        site_id: siteId(d.site),
        name: d.name,
        kind: 'modbus',
        description: d.description,
        host: '127.0.0.1',
        port: opts.port,
        unit_id: d.unitId,
        timeout_ms: 3000,
        register_map: JSON.stringify(d.map),
        column_mapping: '{}',
        area_ids: '[]',
        tolerances: '{}',
        next_run_at: now,
        created_by: engineer?.id ?? null,
        created_at: now,
        updated_at: now,
      })
      .execute()
  }
  const crude = await db
    .selectFrom('area')
    .select('id')
    .where('site_id', '=', siteId('FHR'))
    .where('name', '=', 'Crude Unit')
    .executeTakeFirst()
  await db
    .insertInto('reconciliation_source')
    .values({
      site_id: siteId('FHR'),
      name: 'Crude unit control system',
      kind: 'export',
      description: 'Alarm and trip configuration exported from the crude unit control system',
      register_map: '[]',
      column_mapping: JSON.stringify({
        'Point name': 'tag',
        Parameter: 'attribute',
        'Configured value': 'value',
        'Eng. unit': 'unit',
      }),
      area_ids: JSON.stringify(crude ? [crude.id] : []),
      tolerances: '{}',
      created_by: engineer?.id ?? null,
      created_at: now,
      updated_at: now,
    })
    .execute()
}
