import { describe, expect, it } from 'vitest';
import { fitSweeps } from './fit-sweeps.ts';
import { simulateSweep } from './test-fixtures.ts';

describe('fitting a triangle scan', () => {
  it('fits up and down passes separately (piezo hysteresis) with their time spans', () => {
    // Hysteresis makes the down sweep's apparent period differ (a few % here: common practice).
    const up = simulateSweep({ bins: 150, period: 2.5, seed: 1 });
    const down = simulateSweep({ bins: 150, period: 2.6, down: true, seed: 2 });
    const join = (p: Float64Array, q: Float64Array) => Float64Array.of(...p, ...q);
    const x = join(up.x, down.x);
    const timesMs = Float64Array.from(x, (_, i) => 1_700_000_000_000 + 100 * i);
    const passes = fitSweeps({ x, countsA: join(up.countsA, down.countsA), countsB: join(up.countsB, down.countsB), timesMs, binMs: 100 });
    expect(passes.map((p) => p.direction)).toEqual(['up', 'down']);
    const [a, b] = passes;
    if (!a?.fit.ok || !b?.fit.ok) throw new Error('fit failed');
    expect(Math.abs(a.fit.period.value - 2.5)).toBeLessThan(3 * a.fit.period.err);
    expect(Math.abs(b.fit.period.value - 2.6)).toBeLessThan(3 * b.fit.period.err);
    expect(a.startMs).toBe(1_700_000_000_000);
    expect(b.endMs).toBe(1_700_000_000_000 + 100 * 300);
  });
});
