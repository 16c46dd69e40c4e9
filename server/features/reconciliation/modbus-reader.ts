// The one way Limitkeeper talks to a Modbus device: read only (docs/reconciliation.md#never-a-write).
//
// Client package: modbus-serial (see docs/reconciliation.md for why). The guard works at two levels:
// 1. ReadOnlyModbus exposes reads only, and checks the function code of every request it is asked for;
// 2. guardPort() wraps the transport's write() so that any frame whose function code is not 1–4 is refused before
//    a byte leaves the process, whatever code calls the client underneath.
// Nothing else in the product imports modbus-serial's client (a unit test checks this).
import ModbusRTU from 'modbus-serial'

/** Read coils (1), read discrete inputs (2), read holding registers (3), read input registers (4). */
export const READ_FUNCTION_CODES: ReadonlySet<number> = new Set([1, 2, 3, 4])

export class WriteRefusedError extends Error {
  constructor(readonly functionCode: number) {
    super(`Function code ${functionCode} is not a read: Limitkeeper never writes to a device`)
  }
}

/** Throws unless `functionCode` is a read (1–4). */
export function assertReadFunctionCode(functionCode: number): void {
  if (!READ_FUNCTION_CODES.has(functionCode)) throw new WriteRefusedError(functionCode)
}

/** The function code of an outgoing frame as the client hands it to the transport: [unit id, function code, …]. */
export function assertReadFrame(frame: Uint8Array): void {
  if (frame.length < 2) throw new WriteRefusedError(-1)
  assertReadFunctionCode(frame[1])
}

interface PortLike {
  write(data: Buffer): unknown
}

/** Wraps the transport of a connected client so that only read frames are ever written to the socket. */
export function guardPort(client: ModbusRTU): void {
  const port = (client as unknown as { _port?: PortLike })._port
  if (!port) throw new Error('The Modbus client has no transport to guard')
  const write = port.write.bind(port)
  port.write = (data: Buffer) => {
    assertReadFrame(data)
    return write(data)
  }
}

export type ReadFunctionCode = 1 | 2 | 3 | 4

/** A connection to one device that can only read. */
export class ReadOnlyModbus {
  private constructor(private readonly client: ModbusRTU) {}

  /** Connects within `timeoutMs`; every later request also times out after `timeoutMs`. */
  static async connect(host: string, port: number, unitId: number, timeoutMs: number): Promise<ReadOnlyModbus> {
    const client = new ModbusRTU()
    client.setTimeout(timeoutMs)
    let timer: NodeJS.Timeout | undefined
    try {
      await Promise.race([
        client.connectTCP(host, { port, timeout: timeoutMs }),
        new Promise((_, reject) => {
          timer = setTimeout(() => reject(new Error(`no connection within ${timeoutMs} ms`)), timeoutMs)
        }),
      ])
    } catch (err) {
      destroy(client)
      throw err
    } finally {
      clearTimeout(timer)
    }
    guardPort(client)
    client.setID(unitId)
    return new ReadOnlyModbus(client)
  }

  /** Reads `count` registers (3, 4) or bits (1, 2) from `address`; any other function code is refused, unsent. */
  async read(functionCode: ReadFunctionCode, address: number, count: number): Promise<number[]> {
    assertReadFunctionCode(functionCode)
    switch (functionCode) {
      case 1:
        return (await this.client.readCoils(address, count)).data.slice(0, count).map(Number)
      case 2:
        return (await this.client.readDiscreteInputs(address, count)).data.slice(0, count).map(Number)
      case 3:
        return (await this.client.readHoldingRegisters(address, count)).data
      case 4:
        return (await this.client.readInputRegisters(address, count)).data
    }
  }

  close(): Promise<void> {
    return new Promise((resolve) => {
      if (!this.client.isOpen) {
        destroy(this.client)
        resolve()
        return
      }
      this.client.close(() => resolve())
    })
  }
}

function destroy(client: ModbusRTU) {
  try {
    client.destroy(() => {})
  } catch {
    // already closed
  }
}
