// A pass fitted against calibrated darks keeps its net visibility's own error, and everything that
// reads stored sweeps back (the API's rows, the live figures after a restart) gives the net V with
// that error, said to be net; a pass below the dark level is refused rather than stored.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { fitFringes, type FringeFit } from '../../src/lib/analysis/fringe-fit.ts';
import { simulateSweep } from '../../src/lib/analysis/test-fixtures.ts';
import { startAnalysis, type AnalysisService } from '../../src/lib/server/analysis/service.ts';
import { storeSweep, sweepView, sweepsBetween } from '../../src/lib/server/analysis/sweeps-store.ts';
import type { CompletedPass } from '../../src/lib/server/analysis/sweep-tracker.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { packCounts } from '../../src/lib/server/db/packed-counts.ts';
import { channels, countBatches } from '../../src/lib/server/db/schema.ts';
import { serverEvents } from '../../src/lib/server/events.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';

const tag = Date.now().toString(36).slice(-6);
const BENCH = `snv-${tag}`;
const DT = 10;
let analysis: AnalysisService;

beforeAll(async () => {
  await createBench({ id: BENCH, name: 'Net visibility', wavelengthNm: 633 });
  analysis = startAnalysis({ fit: async (p, options) => fitFringes({ x: p.x, countsA: p.a, countsB: p.b }, options), publish: () => undefined });
});
afterAll(() => {
  analysis?.close();
});

/** A pass of 200 points, one 10 ms bin each, 200 signal and 50 dark counts per bin, ending `endMs`. */
function pass(endMs: number): { pass: CompletedPass; fit: FringeFit } {
  const s = simulateSweep({ bins: 200, amplitudeA: 200, amplitudeB: 200, darkA: 50, darkB: 50, seed: 7 });
  const fit = fitFringes(s, { darkA: 50, darkB: 50, quadratic: true });
  if (!fit.ok) throw new Error(fit.reason);
  const startMs = endMs - 200 * DT;
  return { pass: { startMs, endMs, direction: 'up', x: s.x, a: s.countsA, b: s.countsB, binsPerPoint: new Float64Array(200).fill(1), dtMs: DT }, fit };
}

it('stores the net visibility with its own error beside the raw one', async () => {
  const { pass: p, fit } = pass(Date.now() - 5_000);
  const stored = await storeSweep(BENCH, p, fit, { wavelengthNm: 633, pathFactor: 2 });
  expect(stored?.summary).toMatchObject({ visibility: fit.visibility.value, visibilityErr: fit.visibility.err, visibilityNet: fit.visibilityNet!.value, visibilityNetErr: fit.visibilityNet!.err });
  // Darks dilute the raw fringe and widen the net V's error: the two errors differ.
  expect(fit.visibilityNet!.err).toBeGreaterThan(1.15 * fit.visibility.err);
  const { rows } = await sweepsBetween(BENCH, p.startMs, p.endMs);
  expect(rows.map(sweepView)).toEqual([expect.objectContaining({ visibilityNet: fit.visibilityNet!.value, visibilityNetErr: fit.visibilityNet!.err, visibility: fit.visibility.value, visibilityErr: fit.visibility.err })]);
});

it('gives the live figures the net visibility and its error from stored sweeps after a restart', async () => {
  const [row] = (await sweepsBetween(BENCH, Date.now() - 60_000, Date.now())).rows;
  // The first batch of a bench loads its recent sweeps; the figures follow within a second.
  const t0 = Math.floor(Date.now() / DT) * DT - 1_000;
  serverEvents().emit('batch-stored', { benchId: BENCH, gatewayId: `${BENCH}-gw`, batch: { v: 1, boot: 'b', seq: 0, t0, dt: DT, ch: { a: Array(100).fill(250), b: Array(100).fill(250) } }, receivedAt: Date.now() });
  let visibility = null;
  for (let i = 0; i < 40 && !visibility; i++) {
    await new Promise((r) => setTimeout(r, 100));
    visibility = analysis.figures(BENCH)?.visibility ?? null;
  }
  expect(visibility).toMatchObject({ source: 'sweep', net: true });
  expect(visibility!.value).toBeCloseTo(row!.visibilityNet!, 12);
  expect(visibility!.err).toBeCloseTo(row!.visibilityNetErr!, 12);
});

it('refuses a stored pass whose counts sit below the calibrated darks, and fits the same pass against the true ones', async () => {
  // 5 signal + 20 dark counts per 10 ms bin: darks calibrated at 4,000/s claim 40 per bin.
  const s = simulateSweep({ bins: 200, amplitudeA: 5, amplitudeB: 5, darkA: 20, darkB: 20, seed: 1 });
  const t0 = 1_796_300_000_000;
  const fitted: number[] = [];
  for (const [i, darkRate] of [4_000, 2_000].entries()) {
    const gw = `${BENCH}-d${i}`;
    await createGateway(gw, BENCH);
    await getDb().insert(channels).values([
      { gatewayId: gw, key: 'a', benchId: BENCH, role: 'out_a' as const, darkRate },
      { gatewayId: gw, key: 'b', benchId: BENCH, role: 'out_b' as const, darkRate },
    ]);
    const start = t0 + i * 10_000;
    await getDb()
      .insert(countBatches)
      .values([0, 1].map((k) => {
        const part = (a: Float64Array) => Array.from(a.subarray(k * 100, (k + 1) * 100));
        return { gatewayId: gw, t0: start + k * 100 * DT, t1: start + (k + 1) * 100 * DT, dt: DT, n: 100, keys: ['a', 'b'], counts: packCounts([...part(s.countsA), ...part(s.countsB)]), x: part(s.x), boot: 'b', seq: k };
      }));
    fitted.push(await analysis.fitStored(BENCH, gw, start, start + 200 * DT));
  }
  expect(fitted).toEqual([0, 1]);
});
