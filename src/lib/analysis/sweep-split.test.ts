import { describe, expect, it } from 'vitest';
import { gaussian, mulberry32 } from '../../../simulators/random.ts';
import { splitSweeps } from './sweep-split.ts';

describe('sweep detection', () => {
  it('splits a noisy triangle scan with dwell repeats into alternating up/down passes', () => {
    const rng = mulberry32(7);
    const x: number[] = [];
    for (let pass = 0; pass < 4; pass++) {
      for (let i = 0; i <= 50; i++) {
        const v = pass % 2 === 0 ? i * 0.2 : 10 - i * 0.2;
        // Each step dwells for three bins, with 1 mV of readback jitter on 200 mV steps.
        for (let r = 0; r < 3; r++) x.push(v + 0.001 * gaussian(rng));
      }
    }
    const passes = splitSweeps(x);
    expect(passes.map((p) => p.direction)).toEqual(['up', 'down', 'up', 'down']);
    for (const p of passes) expect(p.end - p.start).toBeGreaterThan(140);
    expect(passes.at(-1)?.end).toBe(x.length);
  });

  it('drops the fly-back of a sawtooth scan as too short to fit', () => {
    const x: number[] = [];
    for (let s = 0; s < 3; s++) for (let i = 0; i < 40; i++) x.push(i);
    const passes = splitSweeps(x);
    expect(passes.map((p) => p.direction)).toEqual(['up', 'up', 'up']);
  });

  it('finds no pass while the scan holds still', () => {
    expect(splitSweeps(new Array(100).fill(3.3))).toEqual([]);
  });
});
