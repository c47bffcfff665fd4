// The seq check behind "possible loss" on the gateway health page: common practice for sequence
// numbers (a gap is what has not arrived; what arrives late fills it, a repeat changes nothing).
import { describe, expect, it } from 'vitest';
import { emptyDelta, noteReject, seqAdvance, type SeqState } from './health-delta.ts';

const run = (seqs: [string, number][]) => {
  const state: SeqState = { boot: null, seq: null };
  return seqs.reduce((gaps, [boot, seq]) => gaps + seqAdvance(state, boot, seq), 0);
};

describe('seqAdvance', () => {
  it('counts seqs skipped within a boot', () => {
    expect(run([['a', 0], ['a', 1], ['a', 4], ['a', 5]])).toBe(2);
  });

  it('takes a gap back when the late batch arrives, and ignores repeats', () => {
    expect(run([['a', 0], ['a', 3], ['a', 1], ['a', 2], ['a', 4]])).toBe(0);
    expect(run([['a', 0], ['a', 3], ['a', 1], ['a', 1], ['a', 3], ['a', 0]])).toBe(1);
  });

  it('starts again with a new boot', () => {
    expect(run([['a', 0], ['a', 5], ['b', 0], ['b', 1], ['a', 1]])).toBe(4);
  });
});

describe('noteReject', () => {
  // PostgreSQL's jsonb refuses "\u0000" and an unpaired surrogate escape (its documentation, "JSON
  // Types"); a note it refuses would take the whole health write, count included, down with it.
  it('keeps reasons storable in jsonb: NUL written out, lone surrogates replaced', () => {
    const d = emptyDelta();
    noteReject(d, 'bad channel key "\ud800"', 1);
    noteReject(d, `bad channel key "${'a'.repeat(19)}\u{1F600}"`.slice(0, 37), 2);
    noteReject(d, 'a\u0000b', 3);
    expect(d.rejects.map((r) => r.reason)).toEqual(['a\\u0000b', `bad channel key "${'a'.repeat(19)}\uFFFD`, 'bad channel key "\uFFFD"']);
    for (const r of d.rejects) expect(() => JSON.parse(JSON.stringify(r))).not.toThrow();
    expect(d.rejects.every((r) => r.reason.isWellFormed())).toBe(true);
  });
});
