// Synthetic fringe data for the tests and the benchmark, drawn straight from the model formula
// with seeded Poisson deviates so every failure can be replayed.
import { mulberry32, poisson } from '../../../simulators/random.ts';
import { expectedCounts, type FringeParams } from './fringe-model.ts';

export interface SimulatedSweep {
  x: Float64Array;
  countsA: Float64Array;
  countsB: Float64Array;
}

export interface SweepSpec extends Partial<FringeParams> {
  bins: number;
  /** Scan range, x units; a down sweep runs from `to` back to `from`. */
  from?: number;
  to?: number;
  down?: boolean;
  darkA?: number;
  darkB?: number;
  seed: number;
}

/** Defaults: a 0–10 V piezo ramp over ~4 fringes at 1,000 counts per bin per output. */
export function simulateSweep(spec: SweepSpec): SimulatedSweep {
  const rng = mulberry32(spec.seed);
  const params: FringeParams = {
    amplitudeA: spec.amplitudeA ?? 1000,
    amplitudeB: spec.amplitudeB ?? 1000,
    visibility: spec.visibility ?? 0.9,
    period: spec.period ?? 2.5,
    phase: spec.phase ?? 0.7,
    quadratic: spec.quadratic ?? 0,
  };
  const from = spec.from ?? 0;
  const to = spec.to ?? 10;
  const n = spec.bins;
  const x = new Float64Array(n);
  const countsA = new Float64Array(n);
  const countsB = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const f = n === 1 ? 0 : i / (n - 1);
    const xi = spec.down ? to - f * (to - from) : from + f * (to - from);
    const m = expectedCounts(xi, params, spec.darkA ?? 0, spec.darkB ?? 0);
    x[i] = xi;
    countsA[i] = poisson(rng, m.a);
    countsB[i] = poisson(rng, m.b);
  }
  return { x, countsA, countsB };
}

/**
 * An event-level non-paralyzable detector (Knoll, Radiation Detection and Measurement, 4th ed.,
 * ch. 4): photons arrive as Poisson events at `rate` per s for `seconds`; a click opens a dead time
 * `tau` in which arrivals are lost. Calls `onClick` with each recorded click's time, s.
 */
export function detectorClicks(rng: () => number, rate: number, seconds: number, tau: number, onClick: (t: number) => void): void {
  let deadUntil = -1;
  for (let t = -Math.log(1 - rng()) / rate; t < seconds; t += -Math.log(1 - rng()) / rate) {
    if (t < deadUntil) continue;
    onClick(t);
    deadUntil = t + tau;
  }
}
