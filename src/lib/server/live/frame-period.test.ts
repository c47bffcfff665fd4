import { describe, expect, it } from 'vitest';
import { FRAME_MS, frameDelay, isLate } from './frame-period.ts';

// The frame rule is this project's own design (DEVELOPERS.md, "Ingest benchmark"): the numbers
// below only follow from FRAME_MS, no outside source applies.
describe('frame period', () => {
  it('holds a frame until a period has passed since the last one', () => {
    expect(frameDelay(1_000, 1_003, false)).toBe(FRAME_MS - 3);
    expect(frameDelay(1_000, 1_000 + FRAME_MS, false)).toBe(0);
    expect(frameDelay(1_000, 1_050, false)).toBe(0);
  });

  it('sends at once for a batch that already waited a period for its write', () => {
    expect(frameDelay(1_000, 1_003, true)).toBe(0);
    expect(isLate(1_000, 1_000 + FRAME_MS - 1)).toBe(false);
    expect(isLate(1_000, 1_000 + FRAME_MS)).toBe(true);
  });
});
