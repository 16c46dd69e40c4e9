/**
 * Polls `probe` until it answers something truthy and answers that; throws, naming `what`, when `timeoutMs` passes
 * first. For waiting on a condition instead of sleeping a fixed time.
 */
export async function until<T>(
  what: string,
  probe: () => Promise<T | undefined | null | false>,
  timeoutMs = 30_000,
  everyMs = 100,
): Promise<T> {
  const end = Date.now() + timeoutMs
  for (;;) {
    const v = await probe()
    if (v) return v
    if (Date.now() > end) throw new Error(`${what}: not reached within ${timeoutMs} ms`)
    await new Promise((r) => setTimeout(r, everyMs))
  }
}
