// Allan deviation over the API: Poisson counts at a steady rate R sit on the white-noise line
// √(R/τ) (references.md: the Allan variance of Poisson counts per bin equals the mean count
// [computed]), which is the reference the screen draws beside the measured curve.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { mulberry32, poisson } from '../../simulators/random.ts';
import { phaseAtHold } from '../../src/lib/analysis/phase.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { packCounts } from '../../src/lib/server/db/packed-counts.ts';
import { channels, countBatches, rollups, sweeps } from '../../src/lib/server/db/schema.ts';
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
  await seedPhaseBench();
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

it('leaves out a bucket recorded only in part, as a missing one: its sum is no rate over τ₀', async () => {
  const { token } = await userWithToken('observer', 'stab');
  // 300 ms buckets over 400 s of 100 ms bins: the last bucket holds one bin of three.
  const res = await fetch(new URL(`/api/v1/benches/${BENCH}/stability?from=${T0}&to=${T0 + 400_200}&step=300`, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(res.status).toBe(200);
  const body = (await res.json()) as { missingBuckets: number; rates: { meanRate: number; points: { tau: number; adev: number; err: number; poissonLimit: number }[] }[] };
  expect(body.missingBuckets).toBe(1);
  const [rate] = body.rates;
  expect(rate!.meanRate).toBeGreaterThan(RATE * 0.98);
  const first = rate!.points[0]!;
  expect(Math.abs(first.adev - first.poissonLimit)).toBeLessThan(3 * first.err + 0.05 * first.poissonLimit);
});

it('keeps whole rollup buckets of a bin width that does not divide the step (3 ms bins in 1 s: 334, 333, 333 bins)', async () => {
  const bench = `stab3-${tag}`;
  const gw = `stab3-${tag}-gw`;
  await createBench({ id: bench, name: 'Stability 3 ms', wavelengthNm: 633 });
  await createGateway(gw, bench);
  await getDb().insert(channels).values([{ gatewayId: gw, key: 'a', benchId: bench }]);
  // One raw row gives the width; ten minutes of 1 s rollup slots hold the bins starting in each
  // second, as the ingest sums them (slot k starts at 1000k ms; 3 ms bins start on multiples of 3).
  const start = 1_796_300_040_000; // a multiple of 60,000 and of 3
  await getDb().insert(countBatches).values({ gatewayId: gw, t0: start, t1: start + 3, dt: 3, n: 1, keys: ['a'], counts: packCounts([6]), boot: 'b', seq: 0 });
  const rng = mulberry32(8);
  const blocks = [];
  for (let block = 0; block < 10; block++) {
    const binsPer = Array.from({ length: 60 }, (_, k) => {
      const t = start + (block * 60 + k) * 1000;
      return Math.ceil((t + 1000) / 3) - Math.ceil(t / 3);
    });
    blocks.push({ gatewayId: gw, key: 'a', stepMs: 1000, blockT0: start + block * 60_000, sums: binsPer.map((n) => poisson(rng, n * 6)), bins: binsPer });
  }
  expect(new Set(blocks[0]!.bins)).toEqual(new Set([333, 334]));
  await getDb().insert(rollups).values(blocks);
  const { token } = await userWithToken('observer', 'stab');
  const res = await fetch(new URL(`/api/v1/benches/${bench}/stability?from=${start}&to=${start + 600_000}&step=1000`, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(res.status).toBe(200);
  const body = (await res.json()) as { missingBuckets: number; rates: { covers: string; points: unknown[] }[] };
  expect(body.missingBuckets).toBe(0);
  expect(body.rates[0]!.points.length).toBeGreaterThan(5);
  // Its one raw bin carries no drive position: a gateway without a drive holds in every bucket.
  expect(body.rates[0]!.covers).toBe('held');
});

it('reads a range whole, and says so, where no raw bin is left to tell the holds (rollups keep no positions)', async () => {
  const bench = `stabr-${tag}`;
  const gw = `stabr-${tag}-gw`;
  await createBench({ id: bench, name: 'Stability rollups', wavelengthNm: 633 });
  await createGateway(gw, bench);
  await getDb().insert(channels).values([{ gatewayId: gw, key: 'a', benchId: bench }]);
  const start = 1_796_400_000_000; // a multiple of 60,000
  const rng = mulberry32(9);
  const blocks = Array.from({ length: 10 }, (_, block) => ({ gatewayId: gw, key: 'a', stepMs: 1000, blockT0: start + block * 60_000, sums: Array.from({ length: 60 }, () => poisson(rng, RATE)), bins: new Array<number>(60).fill(10) }));
  await getDb().insert(rollups).values(blocks);
  const { token } = await userWithToken('observer', 'stab');
  const res = await fetch(new URL(`/api/v1/benches/${bench}/stability?from=${start}&to=${start + 600_000}&step=1000`, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(res.status).toBe(200);
  const body = (await res.json()) as { rates: { covers: string; buckets: number; points: unknown[] }[]; phase: unknown };
  expect(body.rates.map((r) => [r.covers, r.buckets])).toEqual([['whole', 600]]);
  expect(body.rates[0]!.points.length).toBeGreaterThan(5);
  expect(body.phase).toBeNull();
});

// Phase: a two-output bench (model N_a = η_a·(N/2)(1 + V cos θ) + d_a, N_b = η_b·(N/2)(1 − V cos θ)
// + d_b, Gerry & Knight ch. 6, chapter from memory) that holds at θ₁ for 100 s, sweeps for 50 s,
// sends nothing for 50 s, then holds at θ₂ for 200 s. Only the two holds may enter the phase's
// Allan deviation, as two stretches, and with the channels' efficiencies and darks.
const PH = `stabph-${tag}`;
const PH_GW = `stabph-${tag}-gw`;
const PH_T0 = 1_796_200_000_000;
const V = 0.9;
const ETA_A = 0.5;
const ETA_B = 0.8;
const DARK_A = 200; // counts/s
const DARK_B = 400; // counts/s
const PHOTONS = 10_000; // N, photons/s reaching the beam splitter
const THETA = [1.2, Math.PI - 1.2]; // rad: the two holds
const meanCounts = (theta: number, seconds: number) => ({
  a: (ETA_A * (PHOTONS / 2) * (1 + V * Math.cos(theta)) + DARK_A) * seconds,
  b: (ETA_B * (PHOTONS / 2) * (1 - V * Math.cos(theta)) + DARK_B) * seconds,
});

async function seedPhaseBench() {
  await createBench({ id: PH, name: 'Stability phase', wavelengthNm: 633 });
  await createGateway(PH_GW, PH);
  await getDb()
    .insert(channels)
    .values([
      { gatewayId: PH_GW, key: 'a', benchId: PH, role: 'out_a', efficiency: ETA_A, darkRate: DARK_A, darkRateErr: 5 },
      { gatewayId: PH_GW, key: 'b', benchId: PH, role: 'out_b', efficiency: ETA_B, darkRate: DARK_B, darkRateErr: 5 },
      // A channel with no bins in the range (as an import's is outside its run): no series, so no missing buckets.
      { gatewayId: PH_GW, key: 'z', benchId: PH, role: 'aux' },
    ]);
  const rng = mulberry32(11);
  const rows = [];
  // Batches of 100 bins of 100 ms: 0–9 hold, 10–14 sweep, 15–19 missing, 20–39 hold.
  for (let k = 0; k < 40; k++) {
    if (k >= 15 && k < 20) continue;
    const sweeping = k >= 10 && k < 15;
    const x = Array.from({ length: 100 }, (_, j) => (sweeping ? 3 + 0.15 * ((k - 10) * 100 + j) : k < 10 ? 3 : 40));
    // Sweeping, a fringe every 10 (V) of x.
    const theta = x.map((xi) => (sweeping ? 2 * Math.PI * (xi / 10) : (THETA[k < 10 ? 0 : 1] as number)));
    const means = theta.map((t) => meanCounts(t, DT / 1000));
    const a = means.map((m) => poisson(rng, m.a));
    const b = means.map((m) => poisson(rng, m.b));
    rows.push({ gatewayId: PH_GW, t0: PH_T0 + k * 100 * DT, t1: PH_T0 + (k + 1) * 100 * DT, dt: DT, n: 100, keys: ['a', 'b'], counts: packCounts([...a, ...b]), x, boot: 'b', seq: k });
  }
  await getDb().insert(countBatches).values(rows);
  // The pass that gives the visibility: net V as fitted with the darks, raw V lower.
  await getDb().insert(sweeps).values({ benchId: PH, startMs: PH_T0 - 20_000, endMs: PH_T0 - 10_000, direction: 'up', visibility: 0.8, visibilityErr: 0.01, visibilityNet: V, visibilityNetErr: 0.012, phase: 0, phaseErr: 0.01, periodX: 10, periodXErr: 0.1, counts: 1e5, fit: {} });
}

it('takes the phase only where the drive held still, split at sweeps and gaps, with the channel calibration', async () => {
  const { token } = await userWithToken('observer', 'stabph');
  const step = 200; // ms: two bins a bucket, so a bucket in the sweep sees its drive move
  const res = await fetch(new URL(`/api/v1/benches/${PH}/stability?from=${PH_T0}&to=${PH_T0 + 400_000}&step=${step}`, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(res.status).toBe(200);
  const body = (await res.json()) as { missingBuckets: number; phase: { visibility: number; net: boolean; heldBuckets: number; stretches: number; points: { tau: number; adev: number; err: number; lo: number; hi: number; poissonLimit: number }[] } | null };
  expect(body.missingBuckets).toBe(250);
  expect(body.phase).not.toBeNull();
  const phase = body.phase!;
  expect(phase.visibility).toBe(V);
  expect(phase.net).toBe(true);
  expect(phase.stretches).toBe(2);
  expect(phase.heldBuckets).toBe(500 + 1000);
  // White counting noise only: at τ₀ the Allan deviation is the per-bucket phase error, propagated
  // from Poisson counts by phaseAtHold at the mean counts and pooled over the two holds by their
  // terms (499 and 999). A sweep let in would put whole fringes into it.
  const cal = { visibility: V, efficiencyRatio: ETA_B / ETA_A, darkA: (DARK_A * step) / 1000, darkB: (DARK_B * step) / 1000 };
  const perBucket = THETA.map((t) => {
    const m = meanCounts(t, step / 1000);
    return phaseAtHold(m.a, m.b, cal).err;
  });
  const expected = Math.sqrt((499 * perBucket[0]! ** 2 + 999 * perBucket[1]! ** 2) / 1498);
  const first = phase.points[0]!;
  expect(first.tau).toBeCloseTo(step / 1000, 9);
  expect(Math.abs(first.adev - expected)).toBeLessThan(3 * first.err);
  // The floor: the Cramér–Rao bound 1/I on the phase variance of a bucket's two Poisson counts, darks and all, at its
  // phase (Kay, Fundamentals of Statistical Signal Processing, vol. 1, ch. 3, from memory), with
  // I = Σ(∂λ/∂θ)²/λ (common practice) by central difference on the model's means, pooled the same
  // way. Counting noise alone reaches it: the Allan deviation at τ₀ sits on it.
  const floors = THETA.map((t) => {
    const h = 1e-6;
    const [m, up, down] = [t, t + h, t - h].map((x) => meanCounts(x, step / 1000));
    return 1 / (((up!.a - down!.a) / (2 * h)) ** 2 / m!.a + ((up!.b - down!.b) / (2 * h)) ** 2 / m!.b);
  });
  expect(first.poissonLimit / Math.sqrt((499 * floors[0]! + 999 * floors[1]!) / 1498)).toBeCloseTo(1, 2);
  expect(Math.abs(first.adev - first.poissonLimit)).toBeLessThan(3 * first.err + 0.02 * first.poissonLimit);
  // The longest τ fits in the longer hold (1000 buckets): m = 256 at most, never the 1750-bucket span joined.
  expect(phase.points.at(-1)!.tau).toBeLessThanOrEqual((256 * step) / 1000);
  for (const p of phase.points) expect(p.lo).toBeLessThan(p.adev);
});

// The same bench's rates: the sweep between the holds runs both outputs over the fringe's whole
// depth. Read whole, it put the rate curves far above √(R/τ) and the caption blamed drift; over
// the buckets where the drive held still, Poisson counts at steady rates sit on their floor.
it('takes the rates over the same held stretches as the phase, and puts steady holds on their Poisson floor', async () => {
  const { token } = await userWithToken('observer', 'stabph');
  const step = 200;
  const res = await fetch(new URL(`/api/v1/benches/${PH}/stability?from=${PH_T0}&to=${PH_T0 + 400_000}&step=${step}`, app.url), { headers: { authorization: `Bearer ${token}` } });
  expect(res.status).toBe(200);
  type Rate = { channel: string; covers: string; meanRate: number; buckets: number; stretches: number; points: { tau: number; adev: number; err: number; poissonLimit: number }[] };
  const body = (await res.json()) as { rates: Rate[]; phase: { heldBuckets: number; stretches: number } };
  expect(body.rates.map((r) => r.channel).sort()).toEqual([`${PH_GW}/a`, `${PH_GW}/b`]);
  for (const r of body.rates) {
    expect(r.covers).toBe('held');
    expect([r.buckets, r.stretches]).toEqual([body.phase.heldBuckets, body.phase.stretches]);
    // Counting noise of two steady rates, the held buckets' mean rate between them.
    const key = r.channel.endsWith('/a') ? 'a' : 'b';
    const rates = THETA.map((t) => meanCounts(t, 1)[key]);
    expect(r.meanRate).toBeGreaterThan(Math.min(...rates));
    expect(r.meanRate).toBeLessThan(Math.max(...rates));
    expect(r.points.length).toBeGreaterThan(5);
    for (const p of r.points) {
      // The floor: the two holds' rates weighted by their terms at this τ (499 − 2m + 1 + 999 − 2m + 1 of them, or the longer hold's alone).
      const m = Math.round(p.tau / (step / 1000));
      const terms = [Math.max(0, 500 - 2 * m + 1), 1000 - 2 * m + 1];
      const meanR = (terms[0]! * rates[0]! + terms[1]! * rates[1]!) / (terms[0]! + terms[1]!);
      expect(p.poissonLimit / Math.sqrt(meanR / p.tau)).toBeCloseTo(1, 2);
      expect(Math.abs(p.adev - p.poissonLimit)).toBeLessThan(3 * p.err + 0.02 * p.poissonLimit);
    }
  }
});
