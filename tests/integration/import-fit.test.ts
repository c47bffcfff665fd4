// Imported data gets the same analysis as live data: the sweeps in an uploaded CSV are fitted and
// stored, and the fit recovers the visibility the file was drawn with.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { simulateSweep } from '../../src/lib/analysis/test-fixtures.ts';
import { createBench } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

const BENCH = `imf-${Date.now().toString(36).slice(-6)}`;
let app: RunningApp;

beforeAll(async () => {
  app = await startWebApp();
  await createBench({ id: BENCH, name: 'Import fit', wavelengthNm: 780 });
});
afterAll(async () => {
  await app?.close();
});

it('fits the up and down sweeps of an imported file', async () => {
  const { token } = await userWithToken('operator', 'imf');
  const trueV = 0.93;
  const up = simulateSweep({ bins: 400, visibility: trueV, seed: 11 });
  const down = simulateSweep({ bins: 400, visibility: trueV, seed: 12, down: true });
  const t0 = 1_796_000_000_000;
  const rows = ['t_ms,a,b,x'];
  [up, down].forEach((s, k) => s.x.forEach((x, i) => rows.push(`${t0 + (k * 400 + i) * 10},${s.countsA[i]},${s.countsB[i]},${x}`)));
  const res = await fetch(new URL(`/api/v1/benches/${BENCH}/import?title=Offline%20scan`, app.url), {
    method: 'POST',
    headers: { authorization: `Bearer ${token}`, 'content-type': 'text/csv' },
    body: rows.join('\n') + '\n',
  });
  expect(res.status).toBeLessThan(300);
  const sweeps = (await (await fetch(new URL(`/api/v1/benches/${BENCH}/sweeps?from=${t0}&to=${t0 + 8_000}`, app.url), { headers: { authorization: `Bearer ${token}` } })).json()) as {
    direction: string;
    visibility: number;
    visibilityErr: number;
    fit: { piezoNmPerV: { value: number; err: number } | null };
  }[];
  expect(sweeps.map((s) => s.direction)).toEqual(['up', 'down']);
  // Drawn with V = 0.93: each fit within 4σ of it.
  for (const s of sweeps) expect(Math.abs(s.visibility - trueV)).toBeLessThan(4 * s.visibilityErr);
  // The fixture's fringe period is 2.5 V; a retro-reflecting mirror (path factor 2, the bench
  // default) moves λ/2 per fringe (references.md, "Mirror motion d to optical path"), so
  // 780 nm / (2 · 2.5 V) = 156 nm/V.
  for (const s of sweeps) expect(Math.abs(s.fit.piezoNmPerV!.value - 156)).toBeLessThan(4 * s.fit.piezoNmPerV!.err + 0.5);
});
