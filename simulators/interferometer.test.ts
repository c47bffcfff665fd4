import { describe, expect, it } from 'vitest';
import { countBatchSchema } from '../src/lib/contract/wire.ts';
import { DEMO_BENCHES, createDemoSimulator, findDemoBench } from './demo-benches.ts';
import type { DetectorModel, SimBatch, SimulatorModel } from './interferometer.ts';
import { createSimulator, fringePeriodV, outputProbabilities, validateModel } from './interferometer.ts';
import { nonParalyzable } from './detector.ts';

const perfect: DetectorModel = { efficiency: 1, darkRate: 0, deadTimeNs: 0, afterpulsing: 0 };

/** A lossless, balanced, drift-free interferometer with an ideal linear piezo and ideal detectors. */
function ideal(over: Partial<SimulatorModel> = {}): SimulatorModel {
  return {
    channels: { a: 'a', b: 'b' },
    optics: { wavelengthNm: 800, pathFactor: 2, visibility: 1, phaseOffsetRad: 0, driftRadPerS: 0, driftDiffusionRad2PerS: 0 },
    piezo: { nmPerVolt: 40, hysteresis: 0, nonlinearity: 0 },
    scan: { min: 0, max: 100 },
    source: { kind: 'coherent', photonRate: 1e5 },
    detectors: { a: perfect, b: perfect },
    coincidenceWindowNs: 0,
    ...over,
  };
}

const sum = (xs: readonly number[]): number => xs.reduce((s, x) => s + x, 0);

/** |observed − expected| in units of the Poisson standard deviation of the expected total. */
const pull = (observed: number, expected: number): number => Math.abs(observed - expected) / Math.sqrt(expected);

/** A demo bench's model with the drift switched off, so a long hold stays at one phase. */
function still(id: string): SimulatorModel {
  const model = findDemoBench(id)!.model;
  return { ...model, optics: { ...model.optics, driftRadPerS: 0, driftDiffusionRad2PerS: 0 } };
}

describe('interferometer output probabilities', () => {
  // Gerry & Knight, Introductory Quantum Optics (CUP 2005), ch. 6: a lossless two-output
  // interferometer sends cos²(δ/2) to one output and sin²(δ/2) to the other; with imperfect
  // mode overlap ½(1 ± V cos δ).
  it('sum to 1 for every δ and visibility, and equal cos²(δ/2), sin²(δ/2) at V = 1', () => {
    for (let delta = -10; delta <= 10; delta += 0.37) {
      for (const v of [0, 0.3, 0.95, 1]) {
        const [pa, pb] = outputProbabilities(delta, v);
        expect(pa + pb).toBeCloseTo(1, 14);
        expect(pa).toBeGreaterThanOrEqual(0);
        expect(pb).toBeGreaterThanOrEqual(0);
      }
      const [pa, pb] = outputProbabilities(delta, 1);
      expect(pa).toBeCloseTo(Math.cos(delta / 2) ** 2, 14);
      expect(pb).toBeCloseTo(Math.sin(delta / 2) ** 2, 14);
    }
  });

  it('send all the light to output a at δ = 0 in a lossless balanced interferometer', () => {
    expect(outputProbabilities(0, 1)).toEqual([1, 0]);
    const sim = createSimulator(ideal(), 1);
    const batch = sim.next(1000, 1);
    expect(sum(batch.ch.b!)).toBe(0);
    // Every photon lands in a: 10⁵ photons/s for 1 s.
    expect(pull(sum(batch.ch.a!), 1e5)).toBeLessThan(4);
    expect(sim.truth().probabilities).toEqual({ a: 1, b: 0 });
  });

  it('puts the quarter fringe at a quarter of the period in volts', () => {
    const sim = createSimulator(ideal(), 1);
    const period = fringePeriodV(800, 2, 40);
    expect(period).toBe(10);
    expect(sim.command({ op: 'hold', x: period / 4 })).toEqual({ ok: true });
    const t = sim.truth();
    expect(t.phaseRad).toBeCloseTo(Math.PI / 2, 12);
    expect(t.periodV).toBe(10);
    expect(t.localPeriodV).toBeCloseTo(10, 12);
    const batch = sim.next(2000, 1);
    // Half the light each way: 10⁵ photons/s × 2 s × ½.
    expect(pull(sum(batch.ch.a!), 1e5)).toBeLessThan(4);
    expect(pull(sum(batch.ch.b!), 1e5)).toBeLessThan(4);
  });
});

describe('simulator determinism and shape', () => {
  function run(seed: number, cuts: number[]): SimBatch[] {
    const sim = createDemoSimulator(findDemoBench('mz-810')!, seed);
    sim.command({ op: 'sweep', from: 5, to: 25, step: 0.1, dwell: 3, sweeps: 2 });
    return cuts.map((n) => sim.next(n, 1));
  }
  const concat = (bs: SimBatch[]): SimBatch => ({
    ch: Object.fromEntries(Object.keys(bs[0]!.ch).map((k) => [k, bs.flatMap((b) => b.ch[k]!)])),
    x: bs.flatMap((b) => b.x),
    cc: bs.flatMap((b) => b.cc!),
  });

  it('gives identical batches for the same seed, and different ones for another seed', () => {
    expect(run(42, [500, 500])).toEqual(run(42, [500, 500]));
    expect(run(43, [500])[0]!.ch.a).not.toEqual(run(42, [500])[0]!.ch.a);
  });

  it('gives the same bins however the time is cut into batches', () => {
    expect(concat(run(7, [1000]))).toEqual(concat(run(7, [1, 99, 400, 500])));
  });

  it('produces batches the wire contract accepts', () => {
    for (const bench of DEMO_BENCHES) {
      const sim = createDemoSimulator(bench);
      sim.command({ op: 'sweep', from: bench.scan.min, to: bench.scan.max, step: 0.5, dwell: 10, sweeps: 1 });
      const batch = sim.next(100, 10);
      const parsed = countBatchSchema.safeParse({ v: 1, boot: 'test', seq: 0, t0: 1_796_130_000_000, dt: 10, ...batch });
      expect(parsed.success).toBe(true);
      expect(Object.keys(batch.ch).sort()).toEqual([...sim.channels].sort());
      expect(batch.cc).toHaveLength(100);
    }
  });

  it('reports x at each bin centre following the sweep staircase', () => {
    const sim = createSimulator(ideal(), 1);
    sim.command({ op: 'sweep', from: 2, to: 3, step: 0.5, dwell: 4, sweeps: 1 });
    const { x } = sim.next(18, 1);
    expect(x).toEqual([2, 2, 2, 2, 2.5, 2.5, 2.5, 2.5, 3, 3, 3, 3, 2.5, 2.5, 2.5, 2.5, 2, 2]);
    expect(sim.truth().drive.mode).toBe('hold');
    // The phase per bin is the truth an analysis test compares its fit with: 2π·2·40·x/800.
    expect(sim.lastPhases()[5]).toBeCloseTo((2 * Math.PI * 2 * 40 * 2.5) / 800, 12);
  });

  it('averages the fringe over piezo steps inside one bin', () => {
    const sim = createSimulator(ideal(), 3);
    // Half of each 10 ms bin at δ = 0 (all in a), half at δ = π (all in b): a fringe period is 10 V.
    sim.command({ op: 'sweep', from: 0, to: 5, step: 5, dwell: 5, sweeps: 100 });
    const batch = sim.next(100, 10);
    expect(pull(sum(batch.ch.a!), 5e4)).toBeLessThan(4);
    expect(pull(sum(batch.ch.b!), 5e4)).toBeLessThan(4);
  });

  it('refuses a command outside the scan range with the error the gateway acknowledges', () => {
    const sim = createDemoSimulator(findDemoBench('mz-633')!);
    expect(sim.command({ op: 'hold', x: 151 })).toEqual({ ok: false, error: 'x = 151 V is outside the scan range 0…150 V' });
    expect(sim.command({ op: 'sweep', from: 0, to: 200, step: 1, dwell: 10, sweeps: 1 }).ok).toBe(false);
    expect(sim.truth().drive.x).toBe(0);
  });

  it('rejects a model it cannot honour', () => {
    expect(() => validateModel(ideal({ channels: { a: 'A', b: 'b' } }))).toThrow(/channel key "A"/);
    expect(() => validateModel(ideal({ channels: { a: 'a', b: 'b', herald: 'h' } }))).toThrow(/herald/);
    expect(() => validateModel(ideal({ scan: { min: 5, max: 5 } }))).toThrow(/min < max/);
  });
});

describe('simulated rates', () => {
  it('match the expected rates of a laser bench within Poisson error, with accidental coincidences', () => {
    const sim = createSimulator(still('mz-633'), 6);
    sim.command({ op: 'hold', x: 37 });
    const expected = sim.truth().rates;
    const seconds = 20;
    const batch = sim.next(200, 100);
    for (const key of ['a', 'b']) expect(pull(sum(batch.ch[key]!), expected.ch[key]! * seconds)).toBeLessThan(4);
    expect(pull(sum(batch.cc!), expected.cc * seconds)).toBeLessThan(4);
  });

  it('give the laser bench accidentals R_a·R_b·Δt (g2 = 1)', () => {
    const window = 100; // ns, wide enough for thousands of coincidences
    const sim = createSimulator(ideal({ coincidenceWindowNs: window }), 9);
    sim.command({ op: 'hold', x: 2.5 });
    const seconds = 10;
    const batch = sim.next(100, 100);
    const ra = sum(batch.ch.a!) / seconds;
    const rb = sum(batch.ch.b!) / seconds;
    const g2 = sum(batch.cc!) / (ra * rb * window * 1e-9 * seconds);
    expect(Math.abs(g2 - 1)).toBeLessThan(0.05);
  });

  it('match on the heralded bench, and the heralded g2 estimator recovers the truth', () => {
    const sim = createSimulator(still('mz-810'), 5);
    // Mid-fringe: δ = π/2 + 2πm needs 2π·2·40·x/810 + 0.4 = π/2.
    const x = ((Math.PI / 2 - 0.4) * 810) / (2 * Math.PI * 2 * 40) + 2 * 10.125;
    sim.command({ op: 'hold', x });
    const truth = sim.truth();
    const seconds = 200;
    const batch = sim.next(200, 1000);
    const n = (key: string): number => sum(batch.ch[key]!);
    for (const key of ['a', 'b', 'h']) expect(pull(n(key), truth.rates.ch[key]! * seconds)).toBeLessThan(4);
    const cc = sum(batch.cc!);
    expect(pull(cc, truth.rates.cc * seconds)).toBeLessThan(4);
    // Grangier–Roger–Aspect estimator N_GTR·N_G/(N_GT·N_GR); its relative error ≈ 1/√N_GTR.
    const g2 = (cc * n('h')) / (n('a') * n('b'));
    expect(truth.g2Heralded).not.toBeNull();
    expect(Math.abs(g2 / truth.g2Heralded! - 1)).toBeLessThan(4 / Math.sqrt(cc));
    // Far below the laser's 1 and the classical bound: a single-photon source.
    expect(g2).toBeLessThan(0.05);
  });

  // Knoll, Radiation Detection and Measurement, 4th ed. (Wiley 2010), ch. 4 "Dead Time": a
  // non-paralyzable detector at true rate n measures m = n/(1 + nτ) (chapter from memory; the
  // equation number is not cited).
  it.each([[1e4], [2e5], [1e6], [5e6]])('thin a true rate of %d c/s by dead time to n/(1 + nτ)', (n) => {
    const tau = 1000; // ns
    const sim = createSimulator(ideal({ source: { kind: 'coherent', photonRate: n }, detectors: { a: { ...perfect, deadTimeNs: tau }, b: perfect } }), 2);
    const seconds = 5;
    const measured = sum(sim.next(500, 10).ch.a!);
    const m = nonParalyzable(n, tau * 1e-9);
    expect(pull(measured, m * seconds)).toBeLessThan(4);
    expect(sim.truth().rates.ch.a).toBeCloseTo(m, 6);
    if (n * tau * 1e-9 > 0.1) expect(measured).toBeLessThan(0.95 * n * seconds);
  });

  it('add afterpulses as a fraction of the clicks and dark counts at the dark output', () => {
    const det: DetectorModel = { efficiency: 0.5, darkRate: 300, deadTimeNs: 0, afterpulsing: 0.05 };
    const sim = createSimulator(ideal({ detectors: { a: det, b: det } }), 4);
    const seconds = 10;
    const batch = sim.next(1000, 10);
    // a: 10⁵ × 0.5 + 300 c/s, then ×1.05 afterpulses; b: darks only (δ = 0), ×1.05.
    expect(pull(sum(batch.ch.a!), (5e4 + 300) * 1.05 * seconds)).toBeLessThan(4);
    expect(pull(sum(batch.ch.b!), 300 * 1.05 * seconds)).toBeLessThan(4);
  });

  it('lowers the counts’ visibility below the optical one by darks and accidentals', () => {
    const t = createDemoSimulator(findDemoBench('mz-1550')!).truth();
    expect(t.visibility).toBe(0.95);
    expect(t.countVisibility.a).toBeLessThan(0.95);
    expect(t.countVisibility.a).toBeGreaterThan(0.7);
  });
});

describe('drift', () => {
  it('adds the linear term exactly and a random walk of the set diffusion', () => {
    const rate = 0.02; // rad/s
    const lin = createSimulator(ideal({ optics: { ...ideal().optics, driftRadPerS: rate } }), 1);
    lin.next(100, 100);
    expect(lin.truth().driftRad).toBeCloseTo(rate * 10, 12);

    const diffusion = 1e-3; // rad²/s
    const walks: number[] = [];
    for (let seed = 1; seed <= 300; seed++) {
      const sim = createSimulator(ideal({ optics: { ...ideal().optics, driftDiffusionRad2PerS: diffusion } }), seed);
      sim.next(100, 1000);
      walks.push(sim.truth().driftRad);
    }
    // Variance D·t = 0.1 rad² after 100 s; the sample variance of 300 walks is within ±25% of it.
    const variance = sum(walks.map((w) => w * w)) / walks.length;
    expect(Math.abs(variance / (diffusion * 100) - 1)).toBeLessThan(0.25);
  });
});
