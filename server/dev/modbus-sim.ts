// A simulated Modbus TCP device for development, the demo and the tests: the stand-in for a plant's limit
// controllers behind a gateway. It answers reads (function codes 1–4) from an image of registers per unit id,
// records every request it receives, and refuses and records every write attempt (exception response).
// Served by modbus-serial's ServerTCP, the same package the product reads devices with.
import net from 'node:net'
import { ServerTCP } from 'modbus-serial'
import { encodeRegisters, registerCount } from '../../shared/domain/modbus-decode.ts'
import type { RegisterMapEntry } from '../../shared/schemas/reconciliation.ts'
import { logger } from '../logger.ts'
import { DEMO_DEVICES } from '../seed/demo-reconciliation.ts'
import { freePort } from './free-port.ts'

export interface SimRequest {
  unitId: number
  functionCode: number
  at: Date
}

export interface SimDeviceImage {
  unitId: number
  map: RegisterMapEntry[]
  values: Record<string, string>
}

export interface ModbusSim {
  port: number
  /** Every request received, in order (function code as sent). */
  requests: SimRequest[]
  /** Requests with a function code other than 1–4: refused with an exception response. */
  writeAttempts: SimRequest[]
  /** Changes what the device holds (as a technician would on the panel): `tag|attribute` in the map entry's unit. */
  setValue(unitId: number, tag: string, attribute: string, value: string): void
  /** Stops answering (the device goes silent: connections are accepted but nothing is answered). */
  setSilent(silent: boolean): void
  close(): Promise<void>
}

const ILLEGAL_FUNCTION = 0x01
const ILLEGAL_DATA_ADDRESS = 0x02

function portInUse(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const s = net.createServer()
    s.once('error', () => resolve(true))
    s.listen(port, '127.0.0.1', () => s.close(() => resolve(false)))
  })
}

const refusal = (code: number) => Object.assign(new Error('refused'), { modbusErrorCode: code })

/**
 * Starts the simulated device on 127.0.0.1:`port` (0 = a free port) holding `devices` (the demo plant's limit
 * controllers by default). A port in use is an error with a sentence saying what to do.
 */
export async function startModbusSim(
  port = 0,
  opts: { devices?: SimDeviceImage[]; quiet?: boolean } = {},
): Promise<ModbusSim> {
  const devices = opts.devices ?? DEMO_DEVICES
  // image: unit id → function code (3 or 4) → address → register value
  const image = new Map<number, Map<number, Map<number, number>>>()
  const maps = new Map<number, RegisterMapEntry[]>()
  const put = (unitId: number, e: RegisterMapEntry, value: string) => {
    const table = image.get(unitId)!.get(e.functionCode)!
    if (e.bit !== null) {
      const on = value === '1' || value.toLowerCase() === 'true'
      const word = table.get(e.address) ?? 0
      table.set(e.address, on ? word | (1 << e.bit) : word & ~(1 << e.bit))
      return
    }
    const raw = Number(value) / Number(e.scale)
    encodeRegisters(raw, e.dataType, e.wordOrder).forEach((r, i) => table.set(e.address + i, r))
  }
  for (const d of devices) {
    image.set(
      d.unitId,
      new Map([
        [3, new Map()],
        [4, new Map()],
      ]),
    )
    maps.set(d.unitId, d.map)
    for (const e of d.map) {
      const v = d.values[`${e.tag}|${e.attribute}`]
      if (v !== undefined) put(d.unitId, e, v)
      else
        for (let i = 0; i < registerCount(e.dataType); i++)
          image
            .get(d.unitId)!
            .get(e.functionCode)!
            .set(e.address + i, 0)
    }
  }
  const requests: SimRequest[] = []
  const writeAttempts: SimRequest[] = []
  let silent = false

  const readBlock = (fc: 3 | 4, addr: number, length: number, unitId: number): number[] => {
    const table = image.get(unitId)?.get(fc)
    if (!table) throw refusal(ILLEGAL_DATA_ADDRESS)
    const out: number[] = []
    for (let a = addr; a < addr + length; a++) {
      const v = table.get(a)
      if (v === undefined) throw refusal(ILLEGAL_DATA_ADDRESS)
      out.push(v)
    }
    return out
  }
  const refuseWrite = () => {
    throw refusal(ILLEGAL_FUNCTION)
  }
  const vector = {
    getMultipleHoldingRegisters: (addr: number, length: number, unitID: number) => readBlock(3, addr, length, unitID),
    getMultipleInputRegisters: (addr: number, length: number, unitID: number) => readBlock(4, addr, length, unitID),
    getHoldingRegister: (addr: number, unitID: number) => readBlock(3, addr, 1, unitID)[0],
    getInputRegister: (addr: number, unitID: number) => readBlock(4, addr, 1, unitID)[0],
    getCoil: () => false,
    getDiscreteInput: () => false,
    setRegister: refuseWrite,
    setRegisterArray: refuseWrite,
    setCoil: refuseWrite,
  }

  const chosen = port === 0 ? await freePort() : port
  if (port !== 0 && (await portInUse(port)))
    throw new Error(
      `Port ${port} for the simulated Modbus device is already in use: ` +
        'stop what listens there or set MODBUS_SIM_PORT to a free port.',
    )
  const server = new ServerTCP(vector, { host: '127.0.0.1', port: chosen, unitID: 255 })
  const inner = (server as unknown as { _server: net.Server })._server
  // record what arrives, frame by frame (MBAP header: transaction, protocol, length, unit id; then the PDU)
  inner.on('connection', (sock: net.Socket) => {
    let buf = Buffer.alloc(0)
    const original = sock.listeners('data')
    sock.removeAllListeners('data')
    sock.on('data', (chunk: Buffer) => {
      buf = Buffer.concat([buf, chunk])
      while (buf.length >= 8) {
        const len = buf.readUInt16BE(4)
        if (buf.length < 6 + len) break
        const req = { unitId: buf[6], functionCode: buf[7], at: new Date() }
        requests.push(req)
        if (![1, 2, 3, 4].includes(req.functionCode)) {
          writeAttempts.push(req)
          if (!opts.quiet)
            logger.warn(
              { component: 'modbus-sim', functionCode: req.functionCode, unitId: req.unitId },
              'simulated Modbus device refused a write',
            )
        }
        buf = buf.subarray(6 + len)
      }
      if (!silent) for (const l of original) (l as (c: Buffer) => void).call(sock, chunk)
    })
  })
  await new Promise<void>((resolve, reject) => {
    server.once('initialized', () => resolve())
    server.once('serverError', (err: Error) => reject(err))
  })
  return {
    port: chosen,
    requests,
    writeAttempts,
    setValue(unitId, tag, attribute, value) {
      const e = maps.get(unitId)?.find((m) => m.tag === tag && m.attribute === attribute)
      if (!e) throw new Error(`unit ${unitId} has no register for ${tag} ${attribute}`)
      put(unitId, e, value)
    },
    setSilent(s) {
      silent = s
    },
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  }
}
