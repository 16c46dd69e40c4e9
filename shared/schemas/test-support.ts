import { z } from 'zod'
import { InstantSchema } from './common.ts'

/** `POST /api/test/clock` (mounted only when NODE_ENV=test): the instant the server's clock is set to. */
export const TestClockInputSchema = z.object({ now: InstantSchema })
export type TestClockInput = z.infer<typeof TestClockInputSchema>
