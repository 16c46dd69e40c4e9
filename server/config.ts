import { z } from 'zod'

const bool = z.enum(['true', 'false', '1', '0']).transform((v) => v === 'true' || v === '1')

const EnvSchema = z.object({
  NODE_ENV: z.enum(['development', 'production', 'test']).default('development'),
  HOST: z.string().default('127.0.0.1'),
  PORT: z.coerce.number().int().min(0).max(65535).default(8080),
  APP_URL: z.string().optional(),
  // an optional hot standby (streaming replication) for the heavy reads (docs/deployment.md, "A read standby")
  READ_DATABASE_URL: z.string().optional(),
  DATABASE_URL: z.string().min(1),
  MIGRATION_DATABASE_URL: z.string().optional(),
  SESSION_SECRET: z.string().min(16).default('limitkeeper-local-development-secret'),
  SESSION_IDLE_MINUTES: z.coerce.number().positive().default(30),
  SESSION_ABSOLUTE_HOURS: z.coerce.number().positive().default(12),
  COOKIE_SECURE: bool.default(false),
  TRUST_PROXY: z.string().default('false'),
  SIGNIN_WINDOW_MINUTES: z.coerce.number().positive().default(15),
  SIGNIN_MAX_FAILURES_PER_ACCOUNT: z.coerce.number().int().positive().default(5),
  SIGNIN_MAX_FAILURES_PER_ADDRESS: z.coerce.number().int().positive().default(20),
  SMTP_HOST: z.string().default('127.0.0.1'),
  SMTP_PORT: z.coerce.number().int().positive().default(2525),
  SMTP_SECURE: bool.default(false),
  SMTP_USER: z.string().optional(),
  SMTP_PASS: z.string().optional(),
  MAIL_FROM: z.string().default('Limitkeeper <limitkeeper@localhost>'),
  JOB_POLL_SECONDS: z.coerce.number().positive().default(5),
  // how long a job's lease lasts unless renewed (renewed every third of it): a crashed instance holds a job this long
  JOB_LEASE_SECONDS: z.coerce.number().min(3).max(600).default(30),
  ALARM_UPLOAD_MAX_MB: z.coerce.number().positive().default(2048),
})

export type Config = z.infer<typeof EnvSchema> & { appUrl: string; trustProxy: boolean | number | string }

/** Reads process.env once, with defaults for the local cluster; throws a readable message when invalid. */
export function loadConfig(env: NodeJS.ProcessEnv = process.env): Config {
  const parsed = EnvSchema.safeParse(env)
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`)
    throw new Error(`Invalid configuration: ${lines.join('; ')}`)
  }
  const c = parsed.data
  if (c.NODE_ENV === 'production' && c.SESSION_SECRET === 'limitkeeper-local-development-secret') {
    throw new Error('Set SESSION_SECRET to a long random value in production.')
  }
  const tp = c.TRUST_PROXY
  const trustProxy = tp === 'true' ? true : tp === 'false' ? false : /^\d+$/.test(tp) ? Number(tp) : tp
  return { ...c, trustProxy, appUrl: c.APP_URL ?? `http://${c.HOST}:${c.PORT}` }
}
