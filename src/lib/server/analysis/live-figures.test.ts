// Which recent bins feed which live figure, checked on steady synthetic counts where each figure
// has a closed form from its published definition.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { demoCalibrations } from '../../../../simulators/demo-calibrations.ts';
import { findDemoBench } from '../../../../simulators/demo-benches.ts';
import { createSimulator, type SimulatorModel } from '../../../../simulators/interferometer.ts';
import { mulberry32, poisson } from '../../../../simulators/random.ts';
import { benchFiguresSchema } from '../../bench-figures-schema.ts';
import type { ChannelSettings, SweepPoint } from './live-figures.ts';
import { computeFigures } from './live-figures.ts';
import { RecentBins } from './recent-bins.ts';

const GW = 'gw';
const T0 = 1_796_000_000_000;
const DT = 10; // ms
const BINS = 100; // one batch = 1 s
const SECONDS = 5;
const A = 60; // counts per bin on output a
const B = 20; // … on output b
const CC_TOTAL = 120; // coincidences over the window

function recent(): RecentBins {
  const r = new RecentBins();
  for (let s = 0; s < SECONDS; s++) {
    // The first 120 bins hold one coincidence each: with steady singles, only their total matters.
    const cc = Array.from({ length: BINS }, (_, i) => (s * BINS + i < CC_TOTAL ? 1 : 0));
    r.add(GW, { v: 1, boot: 'b', seq: s, t0: T0 + s * BINS * DT, dt: DT, ch: { a: new Array(BINS).fill(A), b: new Array(BINS).fill(B) }, cc });
  }
  return r;
}

const channels: ChannelSettings[] = [
  { gateway: GW, key: 'a', label: 'A', role: 'out_a', darkRate: 100, darkRateErr: 10, deadTimeNs: 50, deadTimeModel: 'nonparalyzable', efficiency: 1 },
  { gateway: GW, key: 'b', label: 'B', role: 'out_b', darkRate: null, darkRateErr: null, deadTimeNs: null, deadTimeModel: 'nonparalyzable', efficiency: 1 },
];

const end = T0 + SECONDS * BINS * DT;
const input = (sweepPoints: SweepPoint[] = []) => ({
  benchId: 'bench',
  now: end,
  windowMs: SECONDS * 1000,
  channels,
  coincidenceWindowNs: 1_000,
  recent: recent(),
  sweepPoints,
  phaseHistory: [],
});

describe('computeFigures', () => {
  const { figures } = computeFigures(input());
  const chA = figures.channels.find((c) => c.role === 'out_a')!;
  const chB = figures.channels.find((c) => c.role === 'out_b')!;

  it('gives raw and corrected rates per channel over the window', () => {
    expect(chA.rateRaw).toBeCloseTo((A * 1000) / DT, 9);
    expect(chB.rateRaw).toBeCloseTo((B * 1000) / DT, 9);
    // Knoll, Radiation Detection and Measurement (4th ed., ch. 4), non-paralyzable: n = m/(1 − mτ),
    // applied to the measured and to the dark rate before subtracting.
    const tau = 50e-9;
    const m = (A * 1000) / DT;
    expect(chA.rateCorrected!.value).toBeCloseTo(m / (1 - m * tau) - 100 / (1 - 100 * tau), 6);
    expect(chA.deadTimeLoss).toBeCloseTo(m * tau, 9);
    expect(chB.rateCorrected!.value).toBeCloseTo((B * 1000) / DT, 9);
  });

  it('gives Mandel Q = −1 for counts without variance (Mandel, Opt. Lett. 4, 205 (1979): Q = (Var n − ⟨n⟩)/⟨n⟩)', () => {
    expect(chA.mandelQ!.value).toBeCloseTo(-1, 9);
  });

  it('gives the contrast (N_a − N_b)/(N_a + N_b) over the last second', () => {
    // Common practice: the normalised difference of the two outputs, the usual mid-fringe error signal.
    expect(figures.contrast).toBeCloseTo((A - B) / (A + B), 12);
  });

  // Accidentals R₁R₂τ_c (the chance-coincidence rate 2τ·r₁·r₂ of Knoll, Radiation Detection and
  // Measurement, 4th ed., with τ_c = 2τ; from memory): with steady singles, N_c·T/(N_1·N_2·τ_c).
  it('gives g2(0) as the coincidences over the accidentals', () => {
    const n1 = A * BINS * SECONDS;
    const n2 = B * BINS * SECONDS;
    const accidentals = (n1 * n2 * 1_000e-9) / SECONDS;
    expect(figures.g2!.accidentals).toBeCloseTo(accidentals, 9);
    expect(figures.g2!.value).toBeCloseTo(CC_TOTAL / accidentals, 9);
    expect(figures.alpha).toBeNull();
  });

  it('prefers fits of the last half hour, says when the newest was, and reads the phase at hold with them', () => {
    // A phase that never moves shows no fringe envelope: without a fresh fit there is no visibility.
    expect(figures.visibility).toBeNull();
    const stale = computeFigures(input([{ timeMs: end - 31 * 60_000, value: 0.9, err: 0.01, net: false }])).figures;
    expect(stale.visibility).toBeNull();
    // A sweep, then a hold at mid-fringe for several minutes: the phase still reads.
    const fresh = computeFigures(input([{ timeMs: end - 5 * 60_000, value: 0.9, err: 0.01, net: true }])).figures;
    expect(fresh.visibility).toMatchObject({ source: 'sweep', value: 0.9, latestPassMs: end - 5 * 60_000 });
    // Two outputs ∝ 1 ± V cos θ (common practice): over the last second, dark counts taken off a,
    // cos θ = (N_a − D_a − N_b)/(V (N_a − D_a + N_b)), with N_a the count before a's 50 ns dead time
    // (Knoll, ch. 4, non-paralyzable: n = m/(1 − mτ) over the second).
    const [nb, darkA] = [B * BINS, 100];
    const na = (A * BINS) / (1 - A * BINS * 50e-9);
    expect(fresh.phase?.value).toBeCloseTo(Math.acos((na - darkA - nb) / (0.9 * (na - darkA + nb))), 6);
    expect(fresh.phase?.driftRadPerS).toBeNull(); // fewer than 5 readings yet
    // A raw V (the pass was fitted before the darks were calibrated) holds the darks in its fringe:
    // the phase is read from the counts as they are, cos θ = (N_a − N_b)/(V (N_a + N_b)).
    const raw = computeFigures(input([{ timeMs: end - 5 * 60_000, value: 0.9, err: 0.01, net: false }])).figures;
    expect(raw.phase?.value).toBeCloseTo(Math.acos((na - nb) / (0.9 * (na + nb))), 6);
  });

  it('says whether the drive held still, so a page can tell why a phase is missing', () => {
    // These batches carry no positions: a gateway without a drive counts as holding.
    expect(figures.holding).toBe(true);
    const moving = recent();
    moving.add(GW, { v: 1, boot: 'b', seq: 9, t0: end, dt: DT, ch: { a: new Array(BINS).fill(A), b: new Array(BINS).fill(B) }, x: Array.from({ length: BINS }, (_, i) => i * 0.05) });
    const swept = computeFigures({ ...input([{ timeMs: end - 60_000, value: 0.9, err: 0.01, net: false }]), now: end + 1_000, recent: moving }).figures;
    expect(swept.holding).toBe(false);
    expect(swept.phase).toBeNull();
  });

  it('averages only fits of the newest one\'s kind and says whether they are net of darks', () => {
    const raw = { value: 0.72, err: 0.0034, net: false };
    const net = { value: 0.9, err: 0.0043, net: true };
    const v = (points: SweepPoint[]) => computeFigures(input(points)).figures.visibility!;
    // One fit of the newest kind: the average is that fit, its error untouched by the other kind's.
    const netNewest = v([{ timeMs: end - 30_000, ...raw }, { timeMs: end - 10_000, ...net }]);
    expect(netNewest.net).toBe(true);
    expect(netNewest.value).toBeCloseTo(0.9, 12);
    expect(netNewest.err).toBeCloseTo(0.0043, 12);
    const rawNewest = v([{ timeMs: end - 30_000, ...net }, { timeMs: end - 10_000, ...raw }]);
    expect(rawNewest.net).toBe(false);
    expect(rawNewest.value).toBeCloseTo(0.72, 12);
    expect(rawNewest.err).toBeCloseTo(0.0034, 12);
  });

  it('gives the newest pass beside the mean, and how many passes the mean combines', () => {
    // Inverse-variance weights (common practice): (0.80/0.01² + 0.90/0.02²)/(1/0.01² + 1/0.02²) = 0.82,
    // error 1/√(1/0.01² + 1/0.02²) scaled by √(χ²/dof) = √20, since the two disagree by 0.1/√(0.01² + 0.02²) ≈ 4.5σ.
    const v = computeFigures(input([{ timeMs: end - 60_000, value: 0.8, err: 0.01, net: false }, { timeMs: end - 20_000, endMs: end - 18_000, value: 0.9, err: 0.02, net: false }])).figures.visibility!;
    expect(v.value).toBeCloseTo(0.82, 12);
    expect(v.err).toBeCloseTo(Math.sqrt(20 / (1 / 0.01 ** 2 + 1 / 0.02 ** 2)), 12);
    expect(v.newest).toEqual({ value: 0.9, err: 0.02, endMs: end - 18_000 });
    expect(v.passes).toBe(2);
    expect(v.latestPassMs).toBe(end - 20_000);
    expect(benchFiguresSchema.safeParse(computeFigures(input([{ timeMs: end - 20_000, value: 0.9, err: 0.02, net: false }])).figures).success).toBe(true);
  });
});

describe('computeFigures on whatever a bench sends', () => {
  it('leaves Mandel Q out for a channel without counts (shutter closed, detector off) instead of throwing', () => {
    const r = new RecentBins();
    r.add(GW, { v: 1, boot: 'b', seq: 0, t0: T0, dt: DT, ch: { a: new Array(BINS).fill(0), b: new Array(BINS).fill(B) } });
    const { figures } = computeFigures({ ...input(), recent: r, now: T0 + BINS * DT });
    expect(figures.channels.find((c) => c.role === 'out_a')!.mandelQ).toBeNull();
    expect(figures.channels.find((c) => c.role === 'out_b')!.mandelQ).not.toBeNull();
  });

  it('leaves g²(0) out, and keeps every other figure, when the two outputs never click in the same bin', () => {
    const r = new RecentBins();
    const a = Array.from({ length: BINS }, (_, i) => (i % 20 === 0 ? 1 : 0));
    const b = Array.from({ length: BINS }, (_, i) => (i % 20 === 10 ? 1 : 0));
    r.add(GW, { v: 1, boot: 'b', seq: 0, t0: T0, dt: DT, ch: { a, b }, cc: new Array(BINS).fill(0) });
    const { figures } = computeFigures({ ...input(), recent: r, now: T0 + BINS * DT });
    expect(figures.g2).toBeNull();
    expect(figures.channels).toHaveLength(2);
    expect(benchFiguresSchema.safeParse(figures).success).toBe(true);
  });

  it('keeps its figures when a gateway with a clock far ahead sends a batch from the year 2100', () => {
    const r = recent();
    r.add(GW, { v: 1, boot: 'b', seq: 9, t0: 4_102_444_800_000, dt: DT, ch: { a: [1, 2], b: [3, 4] } }, end);
    const { figures } = computeFigures({ ...input(), recent: r });
    expect(figures.at).toBe(end);
    expect(figures.channels.find((c) => c.role === 'out_a')!.rateRaw).toBeCloseTo((A * 1000) / DT, 9);
  });

  it('shows no phase from a reading at a bright fringe, whose error is unbounded, but keeps it for the drift', () => {
    const r = new RecentBins();
    // Output b dark: D/V clips at 1, θ = 0 (common practice: arccos of the normalised difference).
    r.add(GW, { v: 1, boot: 'b', seq: 0, t0: T0, dt: DT, ch: { a: new Array(BINS).fill(A), b: new Array(BINS).fill(0) } });
    const { figures, phaseReading } = computeFigures({ ...input([{ timeMs: T0, value: 0.8, err: 0.01, net: false }]), recent: r, now: T0 + BINS * DT });
    expect(figures.phase).toBeNull();
    expect(phaseReading?.theta).toBe(0);
    expect(benchFiguresSchema.safeParse(figures).success).toBe(true);
  });

  it('always yields figures the live schema accepts: zeros, floods, darks above the counts, dead time at its limit', () => {
    const counts = fc.array(fc.oneof(fc.constant(0), fc.integer({ min: 0, max: 30 }), fc.integer({ min: 0, max: 2_000_000 })), { minLength: BINS, maxLength: BINS });
    const channel = (key: string, role: ChannelSettings['role']) =>
      fc.record({
        darkRate: fc.option(fc.double({ min: 0, max: 1e7, noNaN: true }), { nil: null }),
        deadTimeNs: fc.option(fc.double({ min: 0, max: 1e4, noNaN: true }), { nil: null }),
        deadTimeModel: fc.constantFrom('nonparalyzable' as const, 'paralyzable' as const),
        efficiency: fc.double({ min: 0, max: 1, noNaN: true }),
      }).map((s): ChannelSettings => ({ gateway: GW, key, label: key, role, darkRateErr: s.darkRate === null ? null : s.darkRate / 10, ...s }));
    fc.assert(
      fc.property(
        fc.array(fc.record({ a: counts, b: counts, g: counts, cc: counts, x: fc.option(fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: BINS, maxLength: BINS }), { nil: undefined }) }), { minLength: 1, maxLength: 3 }),
        fc.tuple(channel('a', 'out_a'), channel('b', 'out_b'), fc.option(channel('g', 'herald'), { nil: null })),
        fc.option(fc.double({ min: 0, max: 1, noNaN: true }), { nil: null }),
        (batches, [ca, cb, cg], sweepV) => {
          const r = new RecentBins();
          batches.forEach((b, s) => r.add(GW, { v: 1, boot: 'b', seq: s, t0: T0 + s * BINS * DT, dt: DT, ch: { a: b.a, b: b.b, g: b.g }, cc: b.cc, ...(b.x ? { x: b.x } : {}) }));
          const at = T0 + batches.length * BINS * DT;
          const { figures } = computeFigures({
            ...input(sweepV === null ? [] : [{ timeMs: at, value: sweepV, err: 0.01, net: false }]),
            channels: cg ? [ca, cb, cg] : [ca, cb],
            recent: r,
            now: at,
          });
          const parsed = benchFiguresSchema.safeParse(figures);
          if (!parsed.success) throw new Error(JSON.stringify(parsed.error.issues.slice(0, 3)));
        },
      ),
      { numRuns: 300, seed: 42 },
    );
  });
});

describe('phase noise against the shot-noise limit', () => {
  it('reads the floor 1/(V√N) for Poisson counts held at mid-fringe, 1/V times the limit at V = 1', () => {
    // Common practice: at mid-fringe the two outputs' normalised difference has variance 1/N for
    // N detected photons and slope V per radian, so δφ = 1/(V√N).
    const rng = mulberry32(3);
    const [bins, perOutput, v] = [1_000, 250, 0.8];
    const r = new RecentBins();
    const ch = { a: Array.from({ length: bins }, () => poisson(rng, perOutput)), b: Array.from({ length: bins }, () => poisson(rng, perOutput)) };
    r.add(GW, { v: 1, boot: 'b', seq: 0, t0: T0, dt: 1, ch, x: new Array(bins).fill(3) });
    const noDarks = channels.map((c) => ({ ...c, darkRate: null, darkRateErr: null, deadTimeNs: null }));
    const { figures } = computeFigures({ ...input([{ timeMs: T0, value: v, err: 0.001, net: false }]), channels: noDarks, recent: r, now: T0 + bins });
    const sn = figures.shotNoise!;
    expect(sn.visibilityLimitRad).toBeCloseTo(1 / (v * Math.sqrt(2 * perOutput)), 2);
    // The standard deviation of 1,000 bins is good to ±√(1/2000) ≈ 2.2 % (1σ).
    expect(Math.abs(sn.measuredRad / sn.visibilityLimitRad! - 1)).toBeLessThan(0.07);
    // …and the ratio's reported 1σ covers that truth.
    expect(Math.abs(sn.ratio - 1 / v)).toBeLessThan(3 * sn.ratioErr!);
    expect(sn.bins).toBe(bins);
  });

  it('fits no line across a missing batch: a phase step there is not read as noise', () => {
    // Half-second batches, the ninth missing; the phase steps from D = +0.2 to −0.2 across the gap,
    // which a second-long segment spanning it would read as ~0.4/(2V) rad of extra noise per bin.
    const rng = mulberry32(8);
    const v = 0.8;
    const r = new RecentBins();
    for (let k = 0; k < 20; k++) {
      if (k === 8) continue;
      const [a, b] = k < 8 ? [300, 200] : [200, 300];
      const ch = { a: Array.from({ length: 50 }, () => poisson(rng, a)), b: Array.from({ length: 50 }, () => poisson(rng, b)) };
      r.add(GW, { v: 1, boot: 'b', seq: k, t0: T0 + k * 500, dt: DT, ch, x: new Array(50).fill(3) });
    }
    const noDarks = channels.map((c) => ({ ...c, darkRate: null, darkRateErr: null, deadTimeNs: null }));
    const { figures } = computeFigures({ ...input([{ timeMs: T0, value: v, err: 0.001, net: false }]), windowMs: 10_000, channels: noDarks, recent: r, now: T0 + 10_000 });
    const sn = figures.shotNoise!;
    expect(sn.bins).toBe(950);
    // At D = ±0.2 the floor is √((1 − D²)/(V² − D²)) = 1.265 times the shot-noise limit (1.012/(V√N)).
    expect(sn.visibilityLimitRad! / sn.limitRad).toBeCloseTo(Math.sqrt(0.96 / 0.6), 2);
    expect(Math.abs(sn.measuredRad / sn.visibilityLimitRad! - 1)).toBeLessThan((3 * sn.ratioErr!) / sn.ratio);
  });
});

describe('phase noise on the 633 nm demo bench (Monte Carlo over its simulator)', () => {
  const bench = findDemoBench('mz-633')!;
  const cals = demoCalibrations(bench);
  const benchChannels: ChannelSettings[] = bench.channels.map((c) => {
    const k = cals.get(c.key)!;
    return { gateway: bench.gateway, key: c.key, label: c.label, role: c.role, darkRate: k.darkRate, darkRateErr: k.darkRateErr, deadTimeNs: k.deadTimeNs, deadTimeModel: k.deadTimeModel, efficiency: k.efficiency };
  });
  const V = bench.model.optics.visibility;

  /**
   * The bench held at mid-fringe (the drive set from the simulator's truth, as an operator would
   * from the contrast) for `seconds`, fed to the live figures as the gateway sends it (10 ms bins,
   * 100 ms batches) with a fresh sweep's V. Figures every `every` s, as the service computes them.
   */
  function hold(model: SimulatorModel, seed: number, seconds: number, every: number): NonNullable<ReturnType<typeof computeFigures>['figures']['shotNoise']>[] {
    const sim = createSimulator(model, seed);
    const radPerVolt = (2 * Math.PI * model.optics.pathFactor * model.piezo.nmPerVolt) / model.optics.wavelengthNm;
    let x = 50;
    for (let k = 0; k < 6; k++) {
      sim.command({ op: 'hold', x });
      const off = Math.PI / 2 - sim.truth().phaseRad;
      x += (off - 2 * Math.PI * Math.round(off / (2 * Math.PI))) / radPerVolt;
    }
    sim.command({ op: 'hold', x });
    const r = new RecentBins();
    const out = [];
    let t = T0;
    for (let s = 1; s <= seconds; s++) {
      for (let b = 0; b < 10; b++, t += 100) r.add(bench.gateway, { v: 1, boot: 'b', seq: s * 10 + b, t0: t, dt: 10, ...sim.next(10, 10) });
      if (s % every !== 0) continue;
      const { figures } = computeFigures({ benchId: bench.id, now: t, windowMs: 10_000, channels: benchChannels, coincidenceWindowNs: 2, recent: r, sweepPoints: [{ timeMs: t - 1000, value: V, err: 0.0003, net: true }], phaseHistory: [] });
      if (figures.shotNoise) out.push(figures.shotNoise);
    }
    return out;
  }

  it('reads the noise over the seconds held, up to the live window', () => {
    const bins = hold(bench.model, 1, 12, 1).map((sn) => sn.bins);
    expect(bins.slice(0, 3)).toEqual([100, 200, 300]);
    expect(bins.at(-1)).toBe(1000);
  });

  it('states an error that matches the spread of readings 10 s apart, around the floor', () => {
    // 30 holds of 120 s (the drift keeps each within the band around mid-fringe): 360 readings that
    // share no bins, whose spread is estimated to 1/√(2·359) = 3.7 %. The spread of
    // (ratio − mean)/ratioErr must be 1 within 15 % (4σ).
    const readings = Array.from({ length: 30 }, (_, k) => hold(bench.model, 100 + k, 120, 10)).flat();
    expect(readings.length).toBeGreaterThan(340);
    const mean = readings.reduce((a, sn) => a + sn.ratio, 0) / readings.length;
    const z = Math.sqrt(readings.reduce((a, sn) => a + ((sn.ratio - mean) / sn.ratioErr!) ** 2, 0) / (readings.length - 1));
    expect(z).toBeGreaterThan(0.85);
    expect(z).toBeLessThan(1.15);
    // A second's reading alone is good to ±7 % (1/√(2·98)); ten seconds' to ±2.3 %.
    expect(readings.every((sn) => sn.bins !== 1000 || Math.abs(sn.ratioErr! / sn.ratio - 1 / Math.sqrt(2 * 980)) < 1e-12)).toBe(true);
    // The floor is 1/(V√N) near mid-fringe to 1 %; the noise sits 1–3 % above it from the
    // afterpulses (0.8 %, super-Poissonian counts) and the drift's random walk within each second.
    const toFloor = readings.reduce((a, sn) => a + sn.measuredRad / sn.visibilityLimitRad!, 0) / readings.length;
    expect(toFloor).toBeGreaterThan(1.0);
    expect(toFloor).toBeLessThan(1.03);
    expect(mean * V).toBeGreaterThan(1.0);
    expect(mean * V).toBeLessThan(1.04);
  });

  it('takes a steady drift out: a fast linear drift leaves the reading as it is without one', () => {
    // 0.3 rad/s sweeps the operating point through the band around mid-fringe in 3 s, so only short
    // holds are read; about each second's mean alone it would add 0.3/√12 = 87 mrad per bin.
    const still = { ...bench.model, optics: { ...bench.model.optics, driftRadPerS: 0, driftDiffusionRad2PerS: 0 } };
    const drifting = { ...still, optics: { ...still.optics, driftRadPerS: 0.3 } };
    const ratio = (m: SimulatorModel) => {
      const r = Array.from({ length: 20 }, (_, k) => hold(m, 200 + k, 3, 3)).flat();
      return { mean: r.reduce((a, sn) => a + sn.ratio, 0) / r.length, err: Math.sqrt(r.reduce((a, sn) => a + sn.ratioErr! ** 2, 0)) / r.length };
    };
    const a = ratio(still);
    const b = ratio(drifting);
    expect(Math.abs(a.mean - b.mean)).toBeLessThan(3 * Math.hypot(a.err, b.err));
  });
});
