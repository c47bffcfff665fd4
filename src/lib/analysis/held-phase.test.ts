import { describe, expect, it } from 'vitest';
import { heldPhaseStretches, heldStretches } from './held-phase.ts';

// Two-output model N_a = η_a·(N/2)(1 + V cos θ) + d_a, N_b = η_b·(N/2)(1 − V cos θ) + d_b (Gerry &
// Knight, Introductory Quantum Optics, ch. 6, from memory for the chapter): noiseless counts give
// θ back exactly once the efficiency ratio and the darks are taken out.
const V = 0.9;
const ETA_A = 0.5;
const ETA_B = 0.8;
const DARK_A = 30;
const DARK_B = 70;
const N = 20_000;
const countsAt = (theta: number) => ({
  a: ETA_A * (N / 2) * (1 + V * Math.cos(theta)) + DARK_A,
  b: ETA_B * (N / 2) * (1 - V * Math.cos(theta)) + DARK_B,
});
const cal = { visibility: V, efficiencyRatio: ETA_B / ETA_A, darkA: DARK_A, darkB: DARK_B };

describe('phase while the drive held still', () => {
  it('recovers θ with the efficiency ratio and the dark counts', () => {
    const thetas = [0.6, 0.7, 0.8, 0.9];
    const c = thetas.map(countsAt);
    const [stretch] = heldPhaseStretches({ a: c.map((v) => v.a), b: c.map((v) => v.b), held: [5, 5, 5, 5] }, cal);
    thetas.forEach((t, i) => expect(stretch!.phase[i]).toBeCloseTo(t, 9));
    // Without them the same counts read as another phase.
    const [naive] = heldPhaseStretches({ a: c.map((v) => v.a), b: c.map((v) => v.b), held: [5, 5, 5, 5] }, { visibility: V, efficiencyRatio: 1 });
    expect(Math.abs(naive!.phase[0]! - 0.6)).toBeGreaterThan(0.1);
  });

  it('ends a stretch where the drive moved, where it settled elsewhere and where either output is missing, keeping a and b on one time grid', () => {
    const c = countsAt(1);
    const a: (number | null)[] = [c.a, c.a, c.a, c.a, c.a, c.a, c.a, null, c.a, c.a];
    const b: (number | null)[] = [c.b, c.b, c.b, c.b, c.b, c.b, c.b, c.b, null, c.b];
    const held: (number | null)[] = [5, 5, null, 5, 5, 7, 7, 7, 7, 7];
    expect(heldPhaseStretches({ a, b, held }, cal).map((s) => [s.run.start, s.phase.length])).toEqual([[0, 2], [3, 2], [5, 2], [9, 1]]);
  });

  it('leaves out the buckets within the margin of a fringe extreme, where the phase floor diverges, and splits there', () => {
    // A drift through θ = 0 read folded: 0.8, 0.5, 0.2 (inside the 0.35 rad margin), 0.1, 0.4, 0.7.
    const thetas = [0.8, 0.5, 0.2, 0.1, 0.4, 0.7, Math.PI - 0.3, 2];
    const c = thetas.map(countsAt);
    const stretches = heldPhaseStretches({ a: c.map((v) => v.a), b: c.map((v) => v.b), held: thetas.map(() => 5) }, cal);
    expect(stretches.map((s) => [s.run.start, s.run.end])).toEqual([[0, 2], [4, 6], [7, 8]]);
    expect([...stretches[1]!.phase].map((p) => Number(p.toFixed(9)))).toEqual([0.4, 0.7]);
  });

  it('gives a rate the same stretches: sweeps, moves between holds and gaps split it, and a still drive without positions (0) holds throughout', () => {
    const values = [10, 11, 12, 13, null, 14, 15, 16, 17, 18];
    const held = [5, 5, null, 5, 5, 5, 7, 7, 0, 0];
    const { runs, stretches } = heldStretches(values, held);
    expect(runs).toEqual([{ start: 0, end: 2 }, { start: 3, end: 4 }, { start: 5, end: 6 }, { start: 6, end: 8 }, { start: 8, end: 10 }]);
    expect(stretches).toEqual([[10, 11], [13], [14], [15, 16], [17, 18]]);
  });
});
