// Allan deviation over the API: Poisson counts at a steady rate R sit on the white-noise line
// √(R/τ) (references.md: the Allan variance of Poisson counts per bin equals the mean count
// [computed]), which is the reference the screen draws beside the measured curve.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { mulberry32, poisson } from '../../simulators/random.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { packCounts } from '../../src/lib/server/db/packed-counts.ts';
import { channels, countBatches } from '../../src/lib/server/db/schema.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = Date.now().toString(36).slice(-6);
const BENCH = `stab-${tag}`;
const GW = `stab-${tag}-gw`;
const T0 = 1_796_100_000_000;
const DT = 100;
const RATE = 2_000;
let app: RunningApp;

beforeAll(async () => {
  app = await startWebApp();
  await createBench({ id: BENCH, name: 'Stability', wavelengthNm: 633 });
  await createGateway(GW, BENCH);
  await getDb().insert(channels).values([{ gatewayId: GW, key: 'a', benchId: BENCH }]);
  const rng = mulberry32(5);
  const rows = [];
  for (let k = 0; k < 40; k++) {
    const counts = Array.from({ length: 100 }, () => poisson(rng, (RATE * DT) / 1000));
    rows.push({ gatewayId: GW, t0: T0 + k * 100 * DT, t1: T0 + (k + 1) * 100 * DT, dt: DT, n: 100, keys: ['a'], counts: packCounts(counts), boot: 'b', seq: k });
  }
  await getDb().insert(countBatches).values(rows);
});
afterAll(async () => {
  await app?.close();
});

it('puts steady Poisson counts on the √(R/τ) line', async () => {
  const { token } = await userWithToken('observer', 'stab');
  const res = await fetch(new URL(`/api/v1/benches/${BENCH}/stability?from=${T0}&to=${T0 + 400_000}&step=${DT}`, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(res.status).toBe(200);
  const body = (await res.json()) as { rates: { meanRate: number; points: { tau: number; adev: number; err: number; poissonLimit: number }[] }[] };
  const [rate] = body.rates;
  expect(rate!.meanRate).toBeGreaterThan(RATE * 0.98);
  for (const p of rate!.points.filter((p) => p.tau <= 3.2)) {
    expect(Math.abs(p.adev - p.poissonLimit)).toBeLessThan(3 * p.err + 0.05 * p.poissonLimit);
  }
});
