import type { Ref } from 'vue'

// Field rows described as data: a view lists its fields (a label, a kind, where the value lives in its form) and
// AppFieldRows renders them, each with the messages of its key. The builders read and write the view's own reactive
// form, so the rows hold no state of their own.

export type FieldKind = 'text' | 'number' | 'textarea' | 'select' | 'autocomplete' | 'combobox' | 'switch' | 'checkbox'

export interface FieldOptions {
  /** Grid width on medium screens and up (of 12); 4 unless said. */
  md?: number
  /** Grid width on small screens (of 12); 12 unless said. */
  cols?: number
  /** Grid width from small screens (600 px) up to medium, when it differs from `cols`. */
  sm?: number
  suffix?: string
  hint?: string
  persistentHint?: boolean
  placeholder?: string
  /** The browser's autofill hint of a text field: `current-password` for a password that signs. */
  autocomplete?: 'current-password'
  /** The input type of a text field (a date, or date and time, picker; a password, hidden; a number with arrows);
   * text unless said. */
  type?: 'date' | 'datetime-local' | 'password' | 'number'
  /** The most characters, counted under a text field or text area. */
  counter?: number
  /** The lines a text area shows before it grows: 2 unless said. */
  rows?: number
  /** The phone keyboard of a number field: 'decimal' unless said. */
  inputmode?: 'decimal' | 'numeric'
  disabled?: boolean
  clearable?: boolean
  /** A select of several values, shown as chips. */
  multiple?: boolean
  hideDetails?: boolean
  /** Whether the field is shown at all (true unless said). */
  show?: boolean
  /** data-test of the field. */
  test?: string
  /** Further keys whose messages the field shows (e.g. `signal` for `signal.kind`). */
  alsoErrorsOf?: string[]
}

export interface FieldSpec extends FieldOptions {
  key: string
  label: string
  kind: FieldKind
  items?: readonly unknown[]
  value: unknown
  set: (value: unknown) => void
  errors: string[]
}

/** Builders of field specs over a view's reactive form and its field messages (keyed by dotted path). */
export function useFormFields<F extends object>(form: F, errors: Ref<Record<string, string[]>>) {
  type Key = Extract<keyof F, string>
  const messages = (keys: string[]) => keys.flatMap((k) => errors.value[k] ?? [])
  const field = (kind: FieldKind, key: Key, label: string, o: FieldOptions = {}, items?: readonly unknown[]) =>
    ({
      ...o,
      kind,
      key,
      label,
      items,
      value: form[key],
      set: (v: unknown) => {
        form[key] = v as F[Key]
      },
      errors: messages([key, ...(o.alsoErrorsOf ?? [])]),
    }) satisfies FieldSpec
  return {
    /** The messages of one key, for a field the view renders itself. */
    err: (key: string) => messages([key]),
    text: (key: Key, label: string, o?: FieldOptions) => field('text', key, label, o),
    /** A number typed as text (the schema parses it), with the decimal keyboard on phones. */
    number: (key: Key, label: string, o?: FieldOptions) => field('number', key, label, { inputmode: 'decimal', ...o }),
    textarea: (key: Key, label: string, o?: FieldOptions) => field('textarea', key, label, { md: 12, ...o }),
    select: (key: Key, label: string, items: readonly unknown[], o?: FieldOptions) =>
      field('select', key, label, o, items),
    autocomplete: (key: Key, label: string, items: readonly unknown[], o?: FieldOptions) =>
      field('autocomplete', key, label, o, items),
    combobox: (key: Key, label: string, items: readonly unknown[], o?: FieldOptions) =>
      field('combobox', key, label, o, items),
    toggle: (key: Key, label: string, o?: FieldOptions) => field('switch', key, label, o),
    /** A box to tick, for a confirmation; its messages show only when there are any. */
    checkbox: (key: Key, label: string, o?: FieldOptions) => field('checkbox', key, label, o),
  }
}
