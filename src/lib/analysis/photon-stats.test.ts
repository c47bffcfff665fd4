import { describe, expect, it } from 'vitest';
import { binomial, mulberry32, poisson } from '../../../simulators/random.ts';
import { alphaFromSums, BinProductSum, g2FromCoincidences, g2FromSums, heraldedAlpha, mandelQ, MandelQSums, poissonQThroughDeadTime } from './photon-stats.ts';
import { detectorClicks } from './test-fixtures.ts';

const BINS = 20_000;

// Mandel, Opt. Lett. 4, 205 (1979): Q = 0 for Poisson light, −1 for Fock states, η·Q when detected
// with efficiency η.
describe('Mandel Q', () => {
  it('is 0 within its error for simulated Poisson (coherent) light', () => {
    const rng = mulberry32(1);
    const counts = Float64Array.from({ length: BINS }, () => poisson(rng, 7));
    const q = mandelQ(counts);
    expect(Math.abs(q.q.value)).toBeLessThan(3 * q.q.err);
  });

  // Monte Carlo: the spread of Q over independent windows against the error each one reports.
  it.each([0.5, 7, 400])('reports an error matching the spread of Q over 400 windows of Poisson counts, mean %s', (mu) => {
    const rng = mulberry32(11);
    const qs: number[] = [];
    const errs: number[] = [];
    for (let k = 0; k < 400; k++) {
      const r = mandelQ(Float64Array.from({ length: 1_000 }, () => poisson(rng, mu)));
      qs.push(r.q.value);
      errs.push(r.q.err);
    }
    const mean = qs.reduce((a, b) => a + b, 0) / qs.length;
    const spread = Math.sqrt(qs.reduce((a, b) => a + (b - mean) ** 2, 0) / (qs.length - 1));
    const reported = errs.reduce((a, b) => a + b, 0) / errs.length;
    // The spread of 400 values is known to ±3.5 % (1σ); allow 12 %.
    expect(Math.abs(reported / spread - 1)).toBeLessThan(0.12);
    expect(Math.abs(mean)).toBeLessThan((4 * spread) / Math.sqrt(qs.length));
  });

  it('leaves out the differences across gaps, where the level may have moved while no bins came', () => {
    // Ten stretches of 100 bins of Poisson counts, the level switching between 470 and 100 across
    // each gap (demo-like numbers): across a gap two bins are no neighbours in time.
    const rng = mulberry32(22);
    const counts = Float64Array.from({ length: 1_000 }, (_, i) => poisson(rng, Math.floor(i / 100) % 2 ? 100 : 470));
    const gaps = Array.from({ length: 9 }, (_, k) => (k + 1) * 100);
    expect(mandelQ(counts).q.value).toBeGreaterThan(0.5);
    const q = mandelQ(counts, gaps);
    expect(Math.abs(q.q.value)).toBeLessThan(3 * q.q.err);
  });

  it('stays 0 for laser light whose fringe drifts over the window, where the variance over the window reads bunching', () => {
    // 10 s of 10 ms bins at ~470 counts per bin, the phase drifting through a fifth of a fringe:
    // the rate changes by tens of per cent, slowly from bin to bin. (Demo-like numbers.)
    const rng = mulberry32(21);
    const n = 1_000;
    const counts = Float64Array.from({ length: n }, (_, i) => poisson(rng, 470 * (1 + 0.3 * Math.sin((2 * Math.PI * 0.2 * i) / n))));
    const mean = counts.reduce((a, b) => a + b, 0) / n;
    const overWindow = counts.reduce((a, b) => a + (b - mean) ** 2, 0) / (n - 1) / mean - 1;
    expect(overWindow).toBeGreaterThan(1);
    const q = mandelQ(counts);
    expect(Math.abs(q.q.value)).toBeLessThan(3 * q.q.err);
  });

  it('is −η for single photons detected with efficiency η', () => {
    const rng = mulberry32(2);
    const eta = 0.6;
    // One photon per bin, each detected with probability η: Bernoulli counts.
    const counts = Float64Array.from({ length: BINS }, () => binomial(rng, 1, eta));
    const q = mandelQ(counts);
    expect(Math.abs(q.q.value + eta)).toBeLessThan(3 * q.q.err);
  });

  it('is positive (bunched) for thermal light: Q = n̄ for a Bose–Einstein distribution', () => {
    const rng = mulberry32(3);
    const mean = 2;
    // Thermal photon number: geometric with p = 1/(1 + n̄).
    const counts = Float64Array.from({ length: BINS }, () => Math.floor(Math.log(rng()) / Math.log(mean / (1 + mean))));
    const q = mandelQ(counts);
    expect(Math.abs(q.q.value - mean)).toBeLessThan(3 * q.q.err);
  });
});

describe('Mandel Q of Poisson light through dead time', () => {
  it('matches an event-level non-paralyzable detector: Q ≈ (1 − mτ)² − 1', () => {
    // One run of clicks binned afterwards, so the dead time carries across bin edges.
    const rng = mulberry32(12);
    const [n, tau, binS, bins] = [2e6, 1e-7, 1e-3, 2_000];
    const counts = new Float64Array(bins);
    detectorClicks(rng, n, bins * binS, tau, (t) => counts[Math.floor(t / binS)]!++);
    const q = mandelQ(counts);
    const m = q.mean / binS;
    expect(Math.abs(q.q.value - poissonQThroughDeadTime(m * tau))).toBeLessThan(3 * q.q.err);
    // …and far from 0: at mτ ≈ 0.17 the dead time alone reads as clearly sub-Poissonian.
    expect(q.q.value).toBeLessThan(-0.15);
  });
});

describe('g2(0) from coincidences', () => {
  const T = 10; // s
  const window = 2e-9; // s: full coincidence window τ_c

  it('is 1 for coherent light: all coincidences are accidentals R₁R₂τ_c', () => {
    const rng = mulberry32(4);
    const r1 = 2e5;
    const r2 = 1.5e5;
    const accidentals = r1 * r2 * window * T;
    const r = g2FromCoincidences({ counts1: [r1 * T], counts2: [r2 * T], binS: T, coincidences: poisson(rng, accidentals), windowS: window })!;
    expect(r.accidentals).toBeCloseTo(accidentals, 6);
    expect(Math.abs(r.g2.value - 1)).toBeLessThan(3 * r.g2.err);
    expect(Math.abs(r.excess.value)).toBeLessThan(3 * r.excess.err);
  });

  it('goes to 0 for an ideal single-photon source, with a Garwood interval on few coincidences', () => {
    const r = g2FromCoincidences({ counts1: [1e6], counts2: [1e6], binS: T, coincidences: 0, windowS: window })!;
    expect(r.g2.value).toBe(0);
    expect(r.interval.lower).toBe(0);
    expect(r.interval.upper).toBeCloseTo(1.841 / r.accidentals, 6); // Gehrels (1986) 1σ upper for n = 0
  });

  it('gives none when the two detectors never click in the same bin: no accidentals to compare with', () => {
    expect(g2FromCoincidences({ counts1: [1, 0, 1, 0], counts2: [0, 1, 0, 1], binS: 1e-3, coincidences: 0, windowS: window })).toBeNull();
    expect(heraldedAlpha({ gates: [5, 5], gateTransmitted: [1, 0], gateReflected: [0, 1], triples: 0 })).toBeNull();
  });

  it('is 2 for thermal light (twice the accidentals)', () => {
    const r = g2FromCoincidences({ counts1: [2e6], counts2: [2e6], binS: T, coincidences: 1600, windowS: window })!;
    expect(r.g2.value).toBeCloseTo(2, 10);
  });

  it('stays 1 for laser light while the two outputs swap through a fringe: accidentals summed bin by bin', () => {
    // Two outputs ∝ 1 ± V cos θ (common practice); uncorrelated light gives R₁(t)R₂(t)τ_c accidentals
    // at each moment, so over a sweep the window totals would give ⟨(1 + V cos θ)(1 − V cos θ)⟩ =
    // 1 − V²/2 (⟨cos²θ⟩ = 1/2 over whole fringes), a false antibunching.
    const rng = mulberry32(9);
    const bins = 2_000;
    const binS = 1e-3;
    const [rate, v] = [4e5, 0.9];
    const c1 = new Float64Array(bins);
    const c2 = new Float64Array(bins);
    let cc = 0;
    for (let i = 0; i < bins; i++) {
      const cos = Math.cos((2 * Math.PI * i) / 200); // ten whole fringes
      const [r1, r2] = [rate * (1 + v * cos), rate * (1 - v * cos)];
      c1[i] = poisson(rng, r1 * binS);
      c2[i] = poisson(rng, r2 * binS);
      cc += poisson(rng, r1 * r2 * window * binS);
    }
    const perBin = g2FromCoincidences({ counts1: c1, counts2: c2, binS, coincidences: cc, windowS: window })!;
    expect(Math.abs(perBin.g2.value - 1)).toBeLessThan(3 * perBin.g2.err);
    const sum = (a: Float64Array) => a.reduce((x, y) => x + y, 0);
    const totals = g2FromCoincidences({ counts1: [sum(c1)], counts2: [sum(c2)], binS: bins * binS, coincidences: cc, windowS: window })!;
    expect(Math.abs(totals.g2.value - (1 - (v * v) / 2))).toBeLessThan(3 * totals.g2.err);
  });
});

// Grangier, Roger & Aspect, Europhys. Lett. 1, 173 (1986); Thorn et al., Am. J. Phys. 72, 1210
// (2004): α = N_GTR·N_G/(N_GT·N_GR); classical light α ≥ 1, a single photon α → 0.
describe('heralded anticorrelation α', () => {
  function simulate(singlePhoton: boolean, seed: number) {
    const rng = mulberry32(seed);
    const eta = 0.3;
    let gates = 0;
    let gt = 0;
    let gr = 0;
    let gtr = 0;
    for (let i = 0; i < 200_000; i++) {
      gates++;
      let t: boolean;
      let r: boolean;
      if (singlePhoton) {
        // One photon at the 50:50 beam splitter: it goes one way only.
        const toT = rng() < 0.5;
        t = toT && rng() < eta;
        r = !toT && rng() < eta;
      } else {
        // Coherent light: independent detections on the two sides.
        t = rng() < eta / 2;
        r = rng() < eta / 2;
      }
      if (t) gt++;
      if (r) gr++;
      if (t && r) gtr++;
    }
    return heraldedAlpha({ gates: [gates], gateTransmitted: [gt], gateReflected: [gr], triples: gtr })!;
  }

  it('is 0 for heralded single photons', () => {
    const a = simulate(true, 5);
    expect(a.alpha.value).toBe(0);
    expect(a.triplesInterval.upper).toBeGreaterThan(0);
  });

  it('is 1 within its error for coherent light', () => {
    const a = simulate(false, 6);
    expect(Math.abs(a.alpha.value - 1)).toBeLessThan(3 * a.alpha.err);
  });

  it('stays 1 for coherent light whose two sides swap through a fringe: expected triples summed bin by bin', () => {
    // Per bin, coherent light gives N_GT·N_GR/N_G triples on average (the estimator's definition);
    // summed over bins whose transmitted and reflected shares move in antiphase, one bin of totals
    // would read 1 − V²/2 instead (as for g2(0) above).
    const rng = mulberry32(10);
    const [bins, gatesPerBin, eta, v] = [400, 20_000, 0.3, 0.9];
    const g = new Float64Array(bins).fill(gatesPerBin);
    const t = new Float64Array(bins);
    const r = new Float64Array(bins);
    let triples = 0;
    for (let i = 0; i < bins; i++) {
      const cos = Math.cos((2 * Math.PI * i) / 40);
      const [pt, pr] = [(eta / 2) * (1 + v * cos), (eta / 2) * (1 - v * cos)];
      t[i] = poisson(rng, gatesPerBin * pt);
      r[i] = poisson(rng, gatesPerBin * pr);
      triples += poisson(rng, gatesPerBin * pt * pr);
    }
    const a = heraldedAlpha({ gates: g, gateTransmitted: t, gateReflected: r, triples })!;
    expect(Math.abs(a.alpha.value - 1)).toBeLessThan(3 * a.alpha.err);
  });

  it('computes the published estimator N_GTR·N_G/(N_GT·N_GR) exactly', () => {
    expect(heraldedAlpha({ gates: [1000], gateTransmitted: [100], gateReflected: [50], triples: 2 })!.alpha.value).toBeCloseTo((2 * 1000) / (100 * 50), 12);
  });
});

// A run's bins are read batch by batch: the sums taken bin by bin give what the whole series does.
describe('photon statistics summed bin by bin', () => {
  /** Mandel Q's estimate and error computed in two passes from the definitions (centred moments). */
  function twoPassQ(counts: number[], follows: boolean[]): { q: number; err: number } {
    const n = counts.length;
    const mean = counts.reduce((a, b) => a + b, 0) / n;
    const u: (number | null)[] = counts.map((c, i) => (i > 0 && follows[i] ? (c - counts[i - 1]!) ** 2 / 2 : null));
    const us = u.filter((v): v is number => v !== null);
    const s = us.reduce((a, b) => a + b, 0) / us.length;
    const g0 = us.reduce((a, v) => a + (v - s) ** 2, 0) / us.length;
    let g1 = 0;
    let third = 0;
    let triplets = 0;
    for (let i = 2; i < n; i++) {
      if (u[i] === null || u[i - 1] === null) continue;
      g1 += (u[i]! - s) * (u[i - 1]! - s);
      third += (counts[i - 1]! - (counts[i - 2]! + counts[i]!) / 2) ** 3;
      triplets++;
    }
    g1 /= us.length;
    const mu3 = (4 / 3) * (third / triplets);
    const ratio = s / mean;
    const varQ = (Math.max(0, g0 + 2 * g1) / us.length - (2 * ratio * mu3) / n + (ratio * ratio * s) / n) / (mean * mean);
    return { q: ratio - 1, err: Math.sqrt(varQ) };
  }

  it('gives Mandel Q and its error as the two-pass definitions do, gaps included', () => {
    const rng = mulberry32(31);
    const counts = Array.from({ length: 5_000 }, (_, i) => poisson(rng, i < 2_500 ? 40 : 900));
    const follows = counts.map((_, i) => i > 0 && i % 700 !== 0 && i !== 2_500);
    const sums = new MandelQSums();
    counts.forEach((c, i) => sums.add(c, follows[i]!));
    const ref = twoPassQ(counts, follows);
    const q = sums.result().q;
    expect(q.value).toBeCloseTo(ref.q, 10);
    expect(q.err / ref.err).toBeCloseTo(1, 9);
    expect(sums.pairCount).toBe(follows.filter(Boolean).length);
  });

  it('adds g2(0)’s accidentals and α’s expected triples batch by batch', () => {
    const rng = mulberry32(32);
    const a = Array.from({ length: 400 }, () => poisson(rng, 30));
    const b = Array.from({ length: 400 }, () => poisson(rng, 20));
    const g = Array.from({ length: 400 }, () => poisson(rng, 300));
    const whole = g2FromCoincidences({ counts1: a, counts2: b, binS: 0.01, coincidences: 17, windowS: 2e-9 })!;
    const acc = new BinProductSum();
    const expected = new BinProductSum();
    for (const half of [[0, 200], [200, 400]] as const) {
      for (let i = half[0]; i < half[1]; i++) {
        acc.add(a[i]!, b[i]!, 0.01 / 2e-9);
        expected.add(a[i]!, b[i]!, g[i]!);
      }
    }
    const parts = g2FromSums(acc, 17)!;
    expect(parts.g2.value / whole.g2.value).toBeCloseTo(1, 12);
    expect(parts.g2.err / whole.g2.err).toBeCloseTo(1, 12);
    const alpha = heraldedAlpha({ gates: g, gateTransmitted: a, gateReflected: b, triples: 3 })!;
    expect(alphaFromSums(expected, 3)!.alpha.err / alpha.alpha.err).toBeCloseTo(1, 12);
  });
});
