import { Router } from 'express'
import { TestClockInputSchema } from '../../../shared/schemas/test-support.ts'
import { AdjustableClock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'

/** `POST /api/test/clock` {now}: mounted only when NODE_ENV=test (see createApp). */
export function createTestClockRouter(deps: AppDeps) {
  const router = Router()
  router.post('/clock', (req, res) => {
    const { now } = TestClockInputSchema.parse(req.body)
    if (!(deps.clock instanceof AdjustableClock)) throw new Error('the test clock needs an AdjustableClock')
    res.json({ now: deps.clock.set(now).toISOString() })
  })
  return router
}
