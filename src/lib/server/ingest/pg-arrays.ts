// PostgreSQL array literals, built with one `join`. node-postgres turns a JS array parameter into
// text element by element (prepareValue + escapeElement for every value): at saturation that was
// ~15 % of the server's CPU and much of its garbage, and still ~6 % for the per-row columns of a
// write once the counts travelled packed. The text sent is the same an array parameter would be. Pure.

/** `{1,2,3}` for an array of finite numbers (validated upstream), null stays null. */
export function numericArrayLiteral(values: readonly number[] | null): string | null {
  return values ? `{${values.join(',')}}` : null;
}

/** `{"a","b"}`: quoted, so a channel key like `null` stays a string. Keys are [a-z0-9_] (validated). */
export function keyArrayLiteral(keys: readonly string[]): string {
  return `{${keys.map((k) => `"${k}"`).join(',')}}`;
}

/**
 * `{"a","b\"c",NULL}` for any strings: each quoted with `\` and `"` escaped, as PostgreSQL's array
 * input reads them ("Array Value Input", PostgreSQL manual 8.15.6); null is NULL.
 */
export function textArrayLiteral(values: readonly (string | null)[]): string {
  return `{${values.map((v) => (v === null ? 'NULL' : `"${v.replace(/[\\"]/g, '\\$&')}"`)).join(',')}}`;
}
