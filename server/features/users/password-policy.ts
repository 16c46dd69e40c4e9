import { ZxcvbnFactory } from '@zxcvbn-ts/core'
import * as common from '@zxcvbn-ts/language-common'
import * as en from '@zxcvbn-ts/language-en'
import { validationFailed } from '../../errors.ts'

// NIST SP 800-63B (June 2017, updated 2020) §5.1.1.2, memorized secret verifiers: compare a new password against
// passwords from previous breach corpuses, dictionary words, repetitive or sequential characters and context-specific
// words (the name of the service, the username), and refuse it when it matches; no composition rules. zxcvbn-ts
// scores a password 0–4 from dictionaries of common passwords, names and words, keyboard patterns, repeats and
// sequences; we refuse anything below 3 ("safely unguessable"). The length minimum stays in the schema
// (shared/schemas/users.ts). A long passphrase of ordinary words passes.
const MIN_SCORE = 3
const CONTEXT_WORDS = ['limitkeeper', 'fernhollow', 'saltmarsh', 'refinery', 'polymers', 'password', 'safety']

let factory: ZxcvbnFactory | null = null
function checker(): ZxcvbnFactory {
  factory ??= new ZxcvbnFactory({
    dictionary: { ...common.dictionary, ...en.dictionary },
    graphs: common.adjacencyGraphs,
    translations: en.translations,
  })
  return factory
}

/** Why the password is refused, or null. `context` are the account's own words (e-mail, name). */
export function passwordWeakness(password: string, context: string[] = []): string | null {
  if (!password.trim()) return 'Choose a password that is not only spaces'
  const words = [...CONTEXT_WORDS, ...context.flatMap((c) => c.toLowerCase().split(/[^a-z0-9]+/)).filter(Boolean)]
  const result = checker().check(password, words)
  if (result.score >= MIN_SCORE) return null
  const hint = result.feedback.warning || result.feedback.suggestions[0]
  return (
    `This password is too easy to guess${hint ? `: ${hint.replace(/\.$/, '')}` : ''}. ` +
    'A few unrelated words make a strong one'
  )
}

/** Throws 400 on the field when the password is too weak. */
export function assertStrongPassword(field: string, password: string, context: string[] = []): void {
  const weakness = passwordWeakness(password, context)
  if (weakness) throw validationFailed({ [field]: [weakness] })
}
