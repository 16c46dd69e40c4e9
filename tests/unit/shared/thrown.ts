/** The error `fn` throws, or undefined when it returns: for checking the fields of a thrown error, not only its class. */
export function thrownBy(fn: () => unknown): unknown {
  try {
    fn()
  } catch (error) {
    return error
  }
  return undefined
}
