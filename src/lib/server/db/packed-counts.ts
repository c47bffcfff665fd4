// Count arrays as stored in `count_batches.counts` and `.cc` (bytea): one byte giving the width w
// (1, 2 or 4), then every count as an unsigned big-endian integer of w bytes. The width is the
// smallest that holds the array's largest count, so 1 ms bins of a few hundred counts cost one or
// two bytes each instead of int4[]'s four plus PostgreSQL parsing every element from text: the
// server sends all of a write's arrays as one binary parameter that PostgreSQL only slices
// (DEVELOPERS.md, "Ingest benchmark"). Big-endian, so SQL can build and read it with int4send
// and get_byte: migration 0004 defines pack_counts(int4[]) and unpack_counts(bytea) for psql. Pure.

export type CountWidth = 1 | 2 | 4;

/** The narrowest width that holds every value (counts are validated integers in 0 … 2^31−1). */
export function countWidth(values: ArrayLike<number>): CountWidth {
  let max = 0;
  for (let i = 0; i < values.length; i++) if (values[i]! > max) max = values[i]!;
  return max < 0x100 ? 1 : max < 0x10000 ? 2 : 4;
}

export const packedLength = (count: number, width: CountWidth) => 1 + count * width;

/** Writes `values` at `out[at]` without the width byte; returns the offset after them. */
function writeValues(values: ArrayLike<number>, width: CountWidth, out: Uint8Array, at: number): number {
  const n = values.length;
  if (width === 1) {
    for (let i = 0; i < n; i++) out[at++] = values[i]!;
  } else if (width === 2) {
    for (let i = 0; i < n; i++) {
      const v = values[i]!;
      out[at++] = v >>> 8;
      out[at++] = v & 0xff;
    }
  } else {
    for (let i = 0; i < n; i++) {
      const v = values[i]!;
      out[at++] = v >>> 24;
      out[at++] = (v >>> 16) & 0xff;
      out[at++] = (v >>> 8) & 0xff;
      out[at++] = v & 0xff;
    }
  }
  return at;
}

/** Writes `values` packed at `out[at]`; returns the offset after them. */
export function writePacked(values: ArrayLike<number>, width: CountWidth, out: Uint8Array, at: number): number {
  out[at] = width;
  return writeValues(values, width, out, at + 1);
}

/** Writes several arrays, one after the other, packed as ONE array at `out[at]`; returns the offset after it. */
export function writePackedAll(arrays: readonly ArrayLike<number>[], width: CountWidth, out: Uint8Array, at: number): number {
  out[at++] = width;
  for (const values of arrays) at = writeValues(values, width, out, at);
  return at;
}

export function packCounts(values: ArrayLike<number>): Buffer {
  const width = countWidth(values);
  const out = Buffer.allocUnsafe(packedLength(values.length, width));
  writePacked(values, width, out, 0);
  return out;
}

/** The counts of a packed array; throws on a malformed one (a stored row is never malformed). */
export function unpackCounts(packed: Uint8Array): number[] {
  const width = packed[0];
  if ((width !== 1 && width !== 2 && width !== 4) || (packed.length - 1) % width !== 0) throw new Error('malformed packed counts');
  const n = (packed.length - 1) / width;
  const out = new Array<number>(n);
  let at = 1;
  if (width === 1) for (let i = 0; i < n; i++) out[i] = packed[at++]!;
  else if (width === 2) for (let i = 0; i < n; i++, at += 2) out[i] = (packed[at]! << 8) | packed[at + 1]!;
  else for (let i = 0; i < n; i++, at += 4) out[i] = ((packed[at]! << 24) | (packed[at + 1]! << 16) | (packed[at + 2]! << 8) | packed[at + 3]!) >>> 0;
  return out;
}

/** A `count_batches` row as read (bytea columns arrive as Buffers), with its arrays unpacked. */
export function unpackRow<R extends { counts: Uint8Array; cc: Uint8Array | null }>(r: R): Omit<R, 'counts' | 'cc'> & { counts: number[]; cc: number[] | null } {
  return { ...r, counts: unpackCounts(r.counts), cc: r.cc ? unpackCounts(r.cc) : null };
}

/** A row's unpacked counts split per channel, in `keys` order (they are channel-major: channel k holds counts[k·n … (k+1)·n)). */
export function channelArrays(r: { n: number; keys: readonly string[]; counts: readonly number[] }): number[][] {
  return r.keys.map((_, k) => r.counts.slice(k * r.n, (k + 1) * r.n));
}
