// Launching the browser, apart from the test helpers so that scripts run outside vitest (npm run docs:screenshots)
// can use it.
import { existsSync } from 'node:fs'
import { type Browser, chromium } from 'playwright-core'

const CHROMIUM = process.env.CHROMIUM_PATH ?? '/usr/bin/chromium'

/** Launches Debian's Chromium headless (playwright-core downloads nothing). */
export function launchChromium(): Promise<Browser> {
  if (!existsSync(CHROMIUM))
    throw new Error(`Chromium not found at ${CHROMIUM}: install it with apt-get install chromium`)
  return chromium.launch({
    executablePath: CHROMIUM,
    headless: true,
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--disable-dev-shm-usage',
    ],
  })
}
