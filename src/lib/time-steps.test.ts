import { describe, expect, it } from 'vitest';
import { pickStep, stabilityStep } from './time-steps.ts';

describe('chart steps', () => {
  it('keeps at most about one point per pixel', () => {
    expect(pickStep(3_600_000, 1_200)).toBe(5_000);
  });

  it('reads a stability series in about 2000 buckets, at whole seconds beyond a few minutes', () => {
    expect(stabilityStep(60_000)).toBe(100);
    expect(stabilityStep(38 * 60_000)).toBe(2_000);
    expect(stabilityStep(6 * 60_000)).toBe(1_000);
  });
});
