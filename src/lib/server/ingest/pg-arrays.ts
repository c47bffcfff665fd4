// PostgreSQL array literals for numeric arrays, built with one `join`. node-postgres turns a JS
// array parameter into text element by element (prepareValue + escapeElement for every value):
// at saturation that was ~15 % of the server's CPU and much of its garbage. Numbers need no
// quoting, so `{1,2,3}` is the same text it would send. Pure.

/** `{1,2,3}` for an array of finite numbers (validated upstream), null stays null. */
export function numericArrayLiteral(values: readonly number[] | null): string | null {
  return values ? `{${values.join(',')}}` : null;
}


/** `{"a","b"}`: quoted, so a channel key like `null` stays a string. Keys are [a-z0-9_] (validated). */
export function keyArrayLiteral(keys: readonly string[]): string {
  return `{${keys.map((k) => `"${k}"`).join(',')}}`;
}
