// GET /api/v1/benches/{id}/sweeps: the contract's fields, oldest first, and a long range thinned
// evenly over the whole range (never just its first rows); `source=live` without imported recordings' passes.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { getDb } from '../../src/lib/server/db/index.ts';
import { runs, sweeps } from '../../src/lib/server/db/schema.ts';
import { createBench } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

const BENCH = `swp-${Date.now().toString(36).slice(-6)}`;
const T0 = 1_796_200_000_000;
let app: RunningApp;

beforeAll(async () => {
  app = await startWebApp();
  await createBench({ id: BENCH, name: 'Sweeps', wavelengthNm: 633 });
  await getDb()
    .insert(sweeps)
    .values(
      Array.from({ length: 50 }, (_, i) => ({
        benchId: BENCH,
        startMs: T0 + i * 1_000,
        endMs: T0 + i * 1_000 + 900,
        direction: i % 2 ? ('down' as const) : ('up' as const),
        visibility: 0.9,
        visibilityErr: 0.01,
        phase: 0.1,
        phaseErr: 0.01,
        periodX: 10,
        periodXErr: 0.1,
        counts: 1000 + i,
        fit: {},
      })),
    );
});
afterAll(async () => {
  await app?.close();
});

it('gives every sweep of a short range with the contract fields', async () => {
  const { token } = await userWithToken('observer', 'swp');
  const res = await fetch(new URL(`/api/v1/benches/${BENCH}/sweeps?from=${T0}&to=${T0 + 60_000}`, app.url), { headers: { authorization: `Bearer ${token}` } });
  const body = (await res.json()) as Record<string, unknown>[];
  expect(body).toHaveLength(50);
  for (const key of ['start', 'end', 'direction', 'visibility', 'visibilityErr', 'phase', 'periodX', 'counts']) expect(body[0]).toHaveProperty(key);
  expect(res.headers.get('x-sweeps-thinned-by')).toBe('1');
});

it('thins a long range evenly and keeps the last sweep', async () => {
  const { token } = await userWithToken('observer', 'swp2');
  const res = await fetch(new URL(`/api/v1/benches/${BENCH}/sweeps?from=${T0}&to=${T0 + 60_000}&max=10`, app.url), { headers: { authorization: `Bearer ${token}` } });
  const body = (await res.json()) as { start: number; counts: number }[];
  expect(res.headers.get('x-sweeps-thinned-by')).toBe('5');
  // At most max: every fifth counted back from the last.
  expect(body.map((s) => s.counts)).toEqual([1004, 1009, 1014, 1019, 1024, 1029, 1034, 1039, 1044, 1049]);
});

it('leaves out the passes of an imported recording with source=live', async () => {
  const { token } = await userWithToken('observer', 'swp3');
  // The last ten passes lie in an imported run's span: they are that import's.
  await getDb().insert(runs).values({ benchId: BENCH, title: 'Imported', startMs: T0 + 40_000, endMs: T0 + 50_000, source: 'import' });
  const get = async (q: string) => (await (await fetch(new URL(`/api/v1/benches/${BENCH}/sweeps?from=${T0}&to=${T0 + 60_000}${q}`, app.url), { headers: { authorization: `Bearer ${token}` } })).json()) as unknown[];
  expect(await get('')).toHaveLength(50);
  expect(await get('&source=live')).toHaveLength(40);
});
