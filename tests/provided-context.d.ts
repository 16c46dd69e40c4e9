// Values the global setup provides to every test file (vitest `inject`).
import 'vitest'

declare module 'vitest' {
  interface ProvidedContext {
    superUrl: string
    ownerUrl: string
    appUrl: string
    templateDb: string
    auditKeyFile: string
  }
}
