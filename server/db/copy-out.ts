import type pg from 'pg'

// PostgreSQL's frontend/backend protocol (its manual, "Message Formats", "COPY Operations"): each message is a type
// byte and a 32-bit length that counts itself, then the body; a COPY … TO STDOUT answers CopyOutResponse ('H'), one
// CopyData ('d') per row, CopyDone ('c'), then CommandComplete and ReadyForQuery as any statement.
const COPY_DATA = 0x64
const COPY_DONE = 0x63
const COPY_OUT_RESPONSE = 0x48
const NOTICE = 0x4e
const PARAMETER_STATUS = 0x53
const NOTIFICATION = 0x41
const HEADER = 5

/** The connection of a pg client as a submitted query sees it: its socket and how to send a statement. */
interface Connection {
  stream: NodeJS.ReadableStream & { listeners(e: 'data'): ((b: Buffer) => void)[] }
  query(text: string): void
}

/**
 * A `COPY … TO STDOUT` whose data, the bodies of its CopyData messages, is read from the connection's socket straight
 * into one buffer: no stream, no buffer per message. Submitted to a pg client (`client.query(copy)`) it takes the
 * socket's data from pg until CopyDone (or anything else: an error, which pg then reads and reports) and hands what
 * follows back to pg, which reads the statement's end as for any query. `done` answers the data.
 */
export class CopyOut {
  readonly done: Promise<Buffer>
  private resolve!: (b: Buffer) => void
  private reject!: (err: Error) => void
  private out: Buffer
  private size = 0
  /** bytes of the current message still to come: its body (CopyData) or bytes to skip */
  private body = 0
  private skipping = false
  /** the start of a message header cut off at the end of the last chunk */
  private carry: Buffer | null = null
  private connection: Connection | null = null
  private pgData: ((b: Buffer) => void) | null = null
  private failed = false

  constructor(
    readonly text: string,
    /** a buffer to fill (a larger one replaces it if the data does not fit), or a guess of the data's size */
    into: Buffer | number = 1 << 20,
  ) {
    // buffers of its own memory, never slices of Node's shared pool: a caller may keep one whole and fill it again
    this.out = typeof into === 'number' ? Buffer.allocUnsafeSlow(into) : into
    this.done = new Promise((resolve, reject) => {
      this.resolve = resolve
      this.reject = reject
    })
    this.done.catch(() => {}) // the caller awaits it; a failure before it does is not unhandled
  }

  submit(connection: Connection): void {
    const stream = connection.stream
    const listeners = stream.listeners('data')
    if (listeners.length !== 1) throw new Error('unexpected listeners on the connection')
    this.connection = connection
    this.pgData = listeners[0]
    stream.removeListener('data', this.pgData)
    stream.on('data', this.onData)
    connection.query(this.text)
  }

  private readonly onData = (chunk: Buffer): void => {
    if (this.carry) {
      chunk = Buffer.concat([this.carry, chunk])
      this.carry = null
    }
    let p = 0
    const n = chunk.length
    while (p < n) {
      if (this.body > 0) {
        const take = Math.min(this.body, n - p)
        if (!this.skipping) this.append(chunk, p, p + take)
        p += take
        this.body -= take
        continue
      }
      if (n - p < HEADER) {
        this.carry = Buffer.from(chunk.subarray(p))
        return
      }
      const type = chunk[p]
      const length = chunk.readInt32BE(p + 1) - 4
      if (
        type === COPY_DATA ||
        type === COPY_OUT_RESPONSE ||
        type === NOTICE ||
        type === PARAMETER_STATUS ||
        type === NOTIFICATION
      ) {
        // the data; or the response's column formats, or a message that may come in between: skipped
        this.skipping = type !== COPY_DATA
        this.body = length
        p += HEADER
      } else {
        // CopyDone: what follows is the statement's end; anything else (an error) pg reads from its start
        return this.detach(chunk.subarray(type === COPY_DONE ? p + HEADER + length : p))
      }
    }
  }

  private append(src: Buffer, from: number, to: number): void {
    const need = this.size + (to - from)
    if (need > this.out.length) {
      const bigger = Buffer.allocUnsafeSlow(Math.max(2 * this.out.length, need))
      this.out.copy(bigger, 0, 0, this.size)
      this.out = bigger
    }
    // a view and TypedArray#set: a row at a time, cheaper than Buffer#copy's checks and conversions
    this.out.set(new Uint8Array(src.buffer, src.byteOffset + from, to - from), this.size)
    this.size = need
  }

  /** Gives the socket back to pg with the bytes not read here. */
  private detach(rest: Buffer): void {
    const stream = this.connection!.stream
    stream.removeListener('data', this.onData)
    stream.on('data', this.pgData!)
    if (rest.length) this.pgData!(rest)
  }

  // what pg calls once it reads the statement's end
  handleCommandComplete(): void {}
  handleReadyForQuery(): void {
    if (!this.failed) this.resolve(this.out.subarray(0, this.size))
  }
  handleError(err: Error): void {
    this.failed = true
    if (this.connection && this.connection.stream.listeners('data').includes(this.onData)) this.detach(Buffer.alloc(0))
    this.reject(err)
  }
}

/**
 * Runs a `COPY … TO STDOUT` on a client and answers its data in one buffer (`CopyOut`): the start of `into` where it
 * is given a buffer and the data fits in it.
 */
export function copyOut(client: pg.ClientBase, text: string, into?: Buffer | number): Promise<Buffer> {
  const copy = new CopyOut(text, into)
  void client.query(copy as unknown as pg.QueryConfig)
  return copy.done
}
