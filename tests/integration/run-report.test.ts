// A run report's photon statistics and stability, from the run's raw bins. A heralded bench with
// classical (coherent) light: gated counts a, b are independent Poisson and the triples in each bin
// are Poisson about N_GT·N_GR/N_G, so α = 1 (Grangier, Roger & Aspect, Europhys. Lett. 1, 173
// (1986)) and each output's Mandel Q = 0 (Mandel, Opt. Lett. 4, 205 (1979)). Between two holds
// the drive sweeps two fringes bin by bin, the outputs swinging in antiphase: window totals would
// read α = 1 − V²/2 ≈ 0.6 there, and pairs of bins at different positions would read the fringe as
// bunching; neither may enter.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { mulberry32, poisson } from '../../simulators/random.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { packCounts } from '../../src/lib/server/db/packed-counts.ts';
import { channels, countBatches, sweeps } from '../../src/lib/server/db/schema.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import { runPhotonStats } from '../../src/lib/server/analysis/run-photon-stats.ts';
import { benchCalibrations } from '../../src/lib/server/benches.ts';
import { loadRunReport } from '../../src/lib/server/run-report.ts';
import { startRun, stopRun } from '../../src/lib/server/runs.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = Date.now().toString(36).slice(-6);
const BENCH = `rr-${tag}`;
const GW = `rr-${tag}-gw`;
const T0 = 1_796_500_000_000;
const DT = 10; // ms
const V = 0.9;
/** Bins: a hold at x = 5, a sweep of one bin per position, a hold at x = 9. */
const HOLD = 6_000;
const SWEEP = 2_000;
let app: RunningApp;
let runId: number;

beforeAll(async () => {
  app = await startWebApp();
  await createBench({ id: BENCH, name: 'Run report', wavelengthNm: 810 });
  await createGateway(GW, BENCH);
  await getDb()
    .insert(channels)
    .values([
      { gatewayId: GW, key: 'a', benchId: BENCH, role: 'out_a' },
      { gatewayId: GW, key: 'b', benchId: BENCH, role: 'out_b' },
      { gatewayId: GW, key: 'h', benchId: BENCH, role: 'herald' },
    ]);
  const rng = mulberry32(41);
  const rows = [];
  const parts: { n: number; x: (i: number) => number }[] = [
    { n: HOLD, x: () => 5 },
    { n: SWEEP, x: (i) => 5 + (20 * (i + 1)) / SWEEP },
    { n: HOLD, x: () => 9 },
  ];
  let t = T0;
  let seq = 0;
  for (const part of parts) {
    for (let start = 0; start < part.n; start += 1_000) {
      const x = Array.from({ length: 1_000 }, (_, i) => part.x(start + i));
      const theta = x.map((xi) => (2 * Math.PI * xi) / 10);
      const a = theta.map((th) => poisson(rng, 100 * (1 + V * Math.cos(th))));
      const b = theta.map((th) => poisson(rng, 100 * (1 - V * Math.cos(th))));
      const h = theta.map(() => poisson(rng, 2_000));
      const cc = a.map((ai, i) => poisson(rng, (ai * b[i]!) / h[i]!));
      rows.push({ gatewayId: GW, t0: t, t1: t + 1_000 * DT, dt: DT, n: 1_000, keys: ['a', 'b', 'h'], counts: packCounts([...a, ...b, ...h]), x, cc: packCounts(cc), boot: 'b', seq: seq++ });
      t += 1_000 * DT;
    }
  }
  await getDb().insert(countBatches).values(rows);
  await getDb().insert(sweeps).values({ benchId: BENCH, startMs: T0 + HOLD * DT, endMs: T0 + (HOLD + SWEEP) * DT, direction: 'up', visibility: V, visibilityErr: 0.002, phase: 0, phaseErr: 0.01, periodX: 10, periodXErr: 0.01, counts: 4e5, fit: {} });
  const { id: userId } = await userWithToken('operator', 'rr');
  const run = await startRun(BENCH, { title: 'Heralded, classical light' }, userId, T0);
  await stopRun(run.id, t);
  runId = run.id;
});
afterAll(async () => {
  await app?.close();
});

it('gives α over the whole run summed bin by bin, and each channel’s Mandel Q over neighbouring bins at one drive position', async () => {
  const report = (await loadRunReport(runId))!;
  const ps = report.photonStats!;
  expect([ps.bins, ps.binMs, ps.readToMs]).toEqual([2 * HOLD + SWEEP, DT, null]);
  expect(ps.g2).toBeNull();
  expect(Math.abs(ps.alpha!.value - 1)).toBeLessThan(3 * ps.alpha!.err);
  // Under 1 %: the sweep's seventh of the run read with window totals (α ≈ 0.6 there) would pull α to about 0.94, many σ off.
  expect(ps.alpha!.err).toBeLessThan(0.01);
  expect(ps.mandelQ.map((q) => q.role)).toEqual(['out_a', 'out_b', 'herald']);
  for (const q of ps.mandelQ) {
    // Each hold gives HOLD − 1 pairs; the sweep moves every bin, so none of its pairs count.
    expect(q.pairs).toBe(2 * (HOLD - 1));
    expect(Math.abs(q.q.value)).toBeLessThan(3 * q.q.err);
  }
});

it('reads a long run up to its bound and says where it stopped', async () => {
  const ps = (await runPhotonStats(await benchCalibrations(BENCH), T0, T0 + (2 * HOLD + SWEEP) * DT, 2, 5_000))!;
  expect([ps.bins, ps.readToMs]).toEqual([5_000, T0 + 5_000 * DT]);
  expect(ps.mandelQ[0]!.pairs).toBe(4_999);
});

it('gives the run’s stability over its two holds, the sweep left out', async () => {
  const { stability } = (await loadRunReport(runId))!;
  expect(stability.tau0).toBe(0.1);
  const outputs = stability.rates.filter((r) => r.role === 'out_a' || r.role === 'out_b');
  expect(outputs).toHaveLength(2);
  for (const r of outputs) {
    expect([r.covers, r.stretches, r.buckets]).toEqual(['held', 2, (2 * HOLD * DT) / 100]);
    for (const p of r.points) expect(Math.abs(p.adev - p.poissonLimit)).toBeLessThan(3 * p.err + 0.02 * p.poissonLimit);
  }
  // The hold at x = 5 sits on the fringe's extreme (θ = π), where no phase can be read and its
  // floor has no bound: the phase keeps the hold at x = 9 (θ = 0.2π) alone.
  expect([stability.phase?.stretches, stability.phase?.heldBuckets]).toEqual([1, (HOLD * DT) / 100]);
});

it('shows them on the report page', async () => {
  const { token } = await userWithToken('observer', 'rr');
  const res = await fetch(new URL(`/runs/${runId}`, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(res.status).toBe(200);
  const html = await res.text();
  for (const text of ['Photon statistics over the run', 'Heralded α', 'Phase noise over the holds', 'Stability over the holds']) expect(html).toContain(text);
  // The run's own export, from its report, downloads the run's bins.
  const href = /href="([^"]*\/export\?run=[^"]*)"/.exec(html)?.[1]?.replace(/&(?:amp|#38);/g, '&');
  expect(href).toBe(`/api/v1/benches/${BENCH}/export?run=${runId}&format=csv`);
  const csv = await fetch(new URL(href!, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(csv.status).toBe(200);
  expect(await csv.text()).toContain(`# run: ${runId}`);
});
