// A write refused by a unique index, told apart from other failures so the caller can say which
// name or state is taken instead of answering 500.

const UNIQUE_VIOLATION = '23505';

/** Whether `err` is a unique violation, of the index named `index` when one is given. */
export function isUniqueViolation(err: unknown, index?: string): boolean {
  // drizzle wraps the driver error; the pg code and the index's name sit on the error or its cause.
  for (let e: unknown = err; e && typeof e === 'object'; e = (e as { cause?: unknown }).cause) {
    const { code, constraint } = e as { code?: unknown; constraint?: unknown };
    if (code === UNIQUE_VIOLATION) return index === undefined || constraint === index;
  }
  return false;
}
