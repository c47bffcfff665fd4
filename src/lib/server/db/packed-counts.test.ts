import { describe, expect, it } from 'vitest';
import { channelArrays, countWidth, packCounts, packedLength, unpackCounts, writePackedAll } from './packed-counts.ts';

describe('packed counts', () => {
  it.each([
    [[0, 1, 255], 1],
    [[256, 0, 65535], 2],
    [[65536, 7, 2 ** 31 - 1], 4],
  ])('%j packs at width %i and unpacks to the same counts', (values, width) => {
    expect(countWidth(values)).toBe(width);
    const packed = packCounts(values);
    expect(packed.length).toBe(1 + values.length * width);
    expect(packed[0]).toBe(width);
    expect(unpackCounts(packed)).toEqual(values);
  });

  it('packs several arrays as the one array they make together', () => {
    const a = [3, 300];
    const b = [7, 8];
    const out = new Uint8Array(packedLength(4, 2) + 2);
    const end = writePackedAll([a, b], 2, out, 2);
    expect(end).toBe(out.length);
    expect(unpackCounts(out.subarray(2))).toEqual([3, 300, 7, 8]);
    expect(out.subarray(2)).toEqual(new Uint8Array(packCounts([3, 300, 7, 8])));
  });

  it('is big-endian, as int4send writes (migration 0004 builds width-4 arrays with it)', () => {
    expect([...packCounts([0x01020304])]).toEqual([4, 1, 2, 3, 4]);
    expect([...packCounts([0x0102])]).toEqual([2, 1, 2]);
  });

  it('refuses a malformed array instead of inventing counts', () => {
    expect(() => unpackCounts(Buffer.from([3, 1, 2, 3]))).toThrow(/malformed/);
    expect(() => unpackCounts(Buffer.from([2, 1, 2, 3]))).toThrow(/malformed/);
  });
});

describe('channelArrays', () => {
  it('splits channel-major counts back into the channels written with writePackedAll', () => {
    const channels = [[1, 2, 3], [40, 50, 60]];
    const packed = Buffer.alloc(packedLength(6, 1));
    writePackedAll(channels, 1, packed, 0);
    expect(channelArrays({ n: 3, keys: ['a', 'b'], counts: unpackCounts(packed) })).toEqual(channels);
  });
});
