import { afterAll, describe, expect, it } from 'vitest';
import { fitSweeps } from '../analysis/fit-sweeps.ts';
import { simulateSweep } from '../analysis/test-fixtures.ts';
import { AnalysisPool, closeAnalysisPool, fitFringesAsync, fitSweepsAsync } from './analysis-worker.ts';

describe('analysis worker pool', () => {
  afterAll(closeAnalysisPool);

  it('gives the same fits as the engine run in-process', async () => {
    const up = simulateSweep({ bins: 200, seed: 1 });
    const down = simulateSweep({ bins: 200, down: true, seed: 2 });
    const input = { x: Float64Array.of(...up.x, ...down.x), countsA: Float64Array.of(...up.countsA, ...down.countsA), countsB: Float64Array.of(...up.countsB, ...down.countsB) };
    expect(await fitSweepsAsync(input)).toEqual(fitSweeps(input));
  });

  it('keeps the calling event loop free while it fits', async () => {
    const s = simulateSweep({ bins: 2000, seed: 3 });
    let ticks = 0;
    const timer = setInterval(() => ticks++, 1);
    const jobs = Array.from({ length: 8 }, () => fitFringesAsync(s, { darkA: 1, darkB: 1 }));
    const results = await Promise.all(jobs);
    clearInterval(timer);
    expect(results.every((r) => r.ok)).toBe(true);
    expect(ticks).toBeGreaterThan(5);
  });

  it('rejects a job that throws, and keeps serving', async () => {
    const pool = new AnalysisPool({ size: 1 });
    await expect(pool.fitSweeps({ x: [1, 2, 3], countsA: [1], countsB: [1] })).rejects.toThrow(/differ in length/);
    const s = simulateSweep({ bins: 100, seed: 4 });
    expect((await pool.fitFringes(s)).ok).toBe(true);
    await pool.close();
    await expect(pool.fitFringes(s)).rejects.toThrow(/closed/);
  });
});
