import pino from 'pino'

/**
 * The one logger of the server: one JSON object per line (pino), or readable lines when `npm start` runs in a
 * terminal. LOG_LEVEL sets the level (default info; silent under tests). Secrets never reach it: the request
 * serializer keeps only method, route and request id, and the redact list below drops whatever might still carry a
 * password, token, cookie or signature body (docs/security.md).
 */
const level = process.env.LOG_LEVEL ?? (process.env.NODE_ENV === 'test' ? 'silent' : 'info')
const pretty = process.env.LOG_FORMAT === 'pretty' || (process.env.LOG_FORMAT !== 'json' && process.stdout.isTTY)

export const REDACTED_PATHS = [
  'password',
  '*.password',
  'currentPassword',
  '*.currentPassword',
  'newPassword',
  '*.newPassword',
  'signature',
  '*.signature',
  'token',
  '*.token',
  'csrfToken',
  '*.csrfToken',
  'cookie',
  '*.cookie',
  'req.headers.cookie',
  'req.headers["x-csrf-token"]',
  'res.headers["set-cookie"]',
]

export const logger = pino({
  level,
  base: { app: 'limitkeeper' },
  redact: { paths: REDACTED_PATHS, censor: '[redacted]' },
  ...(pretty
    ? {
        transport: {
          target: 'pino-pretty',
          options: { colorize: true, translateTime: 'SYS:HH:MM:ss', ignore: 'pid,hostname,app' },
        },
      }
    : {}),
})

export type Logger = typeof logger
