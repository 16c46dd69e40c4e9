import { readdirSync, readFileSync, statSync } from 'node:fs'
import path from 'node:path'
import ModbusRTU from 'modbus-serial'
import { describe, expect, it } from 'vitest'
import { startModbusSim } from '../../../server/dev/modbus-sim.ts'
import {
  assertReadFrame,
  assertReadFunctionCode,
  guardPort,
  ReadOnlyModbus,
} from '../../../server/features/reconciliation/modbus-reader.ts'

// Function codes of the MODBUS Application Protocol Specification V1.1b3 §6: 1–4 read; 5, 6, 15, 16 write;
// 22 mask write register, 23 read/write multiple registers (writes too), 43 encapsulated interface.
describe('the read-only guard', () => {
  it.each([1, 2, 3, 4])('lets read function code %i through', (fc) => {
    expect(() => assertReadFunctionCode(fc)).not.toThrow()
    expect(() => assertReadFrame(Uint8Array.from([1, fc, 0, 0, 0, 1]))).not.toThrow()
  })
  it.each([0, 5, 6, 8, 15, 16, 22, 23, 43, 0x83, 255])('refuses function code %i', (fc) => {
    expect(() => assertReadFunctionCode(fc)).toThrow(/never writes to a device/)
    expect(() => assertReadFrame(Uint8Array.from([1, fc, 0, 0, 0, 1]))).toThrow(/never writes/)
  })

  it('no write frame leaves the process through a guarded client; the simulator receives only reads', async () => {
    const sim = await startModbusSim(0, { quiet: true })
    try {
      // the unguarded client would send a write (the simulator refuses it and records it): proof that the check
      // below can fail
      const control = new ModbusRTU()
      await control.connectTCP('127.0.0.1', { port: sim.port })
      control.setID(1)
      control.setTimeout(1000)
      await expect(control.writeRegister(0, 1)).rejects.toThrow(/Illegal function/)
      expect(sim.writeAttempts.map((r) => r.functionCode)).toEqual([6])
      control.close(() => {})

      const guarded = new ModbusRTU()
      await guarded.connectTCP('127.0.0.1', { port: sim.port })
      guarded.setID(1)
      guarded.setTimeout(1000)
      guardPort(guarded)
      const before = sim.requests.length
      await expect(guarded.writeRegister(0, 1)).rejects.toThrow(/never writes/)
      await expect(guarded.writeRegisters(0, [1, 2])).rejects.toThrow(/never writes/)
      await expect(guarded.writeCoil(0, true)).rejects.toThrow(/never writes/)
      expect((await guarded.readHoldingRegisters(0, 1)).data).toHaveLength(1)
      guarded.close(() => {})

      const reader = await ReadOnlyModbus.connect('127.0.0.1', sim.port, 1, 1000)
      await expect(reader.read(6 as never, 0, 1)).rejects.toThrow(/never writes/)
      expect(await reader.read(3, 0, 2)).toHaveLength(2)
      await reader.close()
      await new Promise((r) => setTimeout(r, 50))
      expect(sim.requests.slice(before).map((r) => r.functionCode)).toEqual([3, 3])
      expect(sim.writeAttempts).toHaveLength(1) // only the control's write
    } finally {
      await sim.close()
    }
  })

  it('nothing but the guarded reader and the simulator imports the Modbus package', () => {
    const root = path.resolve(import.meta.dirname, '../../..')
    const files: string[] = []
    const walk = (dir: string) => {
      for (const f of readdirSync(dir)) {
        const p = path.join(dir, f)
        if (statSync(p).isDirectory()) walk(p)
        else if (/\.(ts|vue)$/.test(f)) files.push(p)
      }
    }
    for (const d of ['server', 'shared', 'src']) walk(path.join(root, d))
    const importers = files
      .filter((f) => /from ['"]modbus-serial['"]/.test(readFileSync(f, 'utf8')))
      .map((f) => path.relative(root, f))
      .sort()
    expect(importers).toEqual(['server/dev/modbus-sim.ts', 'server/features/reconciliation/modbus-reader.ts'])
  })
})
