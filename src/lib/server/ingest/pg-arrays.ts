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

/** Runs of zeros by length, `0,0,…` opening a block and `,0,0,…` after a value: one cached piece each. */
const openingZeros: string[] = [''];
const followingZeros: string[] = [''];

/** A block of `length` numbers given by its non-zero slots (ascending) and their values. */
export interface SparseBlock {
  slots: readonly number[];
  values: readonly number[];
}

/**
 * The same text as `textArrayLiteral(blocks.map((b) => numericArrayLiteral(dense(b))))`, without
 * making the dense arrays: `{"{0,0,12,0}","{…}"}`. A rollup block of 60 sums is mostly zeros (a
 * batch of 100 ms touches one second of it), and building and joining each one densely was a third
 * of what the server allocated per batch at the benchmark's realistic load. Numbers need no quoting
 * or escapes inside the quoted element.
 */
export function blocksLiteral(blocks: readonly SparseBlock[], length: number): string {
  let out = '{';
  for (let b = 0; b < blocks.length; b++) {
    const { slots, values } = blocks[b]!;
    out += b === 0 ? '"{' : ',"{';
    let next = 0;
    for (let j = 0; j < slots.length; j++) {
      const slot = slots[j]!;
      if (slot > next) out += zeroRun(slot - next, next === 0);
      out += slot === 0 ? `${values[j]}` : `,${values[j]}`;
      next = slot + 1;
    }
    if (length > next) out += zeroRun(length - next, next === 0);
    out += '}"';
  }
  return out + '}';
}

/** `n` zeros joined by commas, with a leading comma unless they open the block. */
function zeroRun(n: number, opening: boolean): string {
  for (let k = followingZeros.length; k <= n; k++) {
    followingZeros.push(`${followingZeros[k - 1]},0`);
    openingZeros.push(k === 1 ? '0' : `${openingZeros[k - 1]},0`);
  }
  return opening ? openingZeros[n]! : followingZeros[n]!;
}
