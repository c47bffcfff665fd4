import { describe, expect, it } from 'vitest';
import { PATH_FACTORS, piezoCalibration } from './piezo.ts';

describe('piezo calibration', () => {
  // A mirror moved d in one arm changes the path by 2d (references.md: one fringe per λ/2 of travel).
  it('gives λ/(2P) for a retro-reflecting mirror: 810 nm over a 2.5 V period → 162 nm/V', () => {
    const c = piezoCalibration({ value: 2.5, err: 0.025 }, 810, PATH_FACTORS.retroReflection);
    expect(c.value).toBeCloseTo(162, 10);
    expect(c.err).toBeCloseTo(1.62, 10);
  });

  it('takes the geometry as a setting: a 45° fold mirror moves λ/√2 per fringe', () => {
    expect(piezoCalibration({ value: 1, err: 0 }, 810, PATH_FACTORS.fold45).value).toBeCloseTo(810 / Math.SQRT2, 10);
    expect(() => piezoCalibration({ value: 1, err: 0 }, 810, 0)).toThrow(RangeError);
  });
});
