// Per-channel rate corrections with their uncertainties: dead time, dark counts, and the relative
// detection efficiency of the two interferometer outputs.
import { correctDeadTime, type DeadTimeModel } from './dead-time.ts';
import type { Measured } from './measured.ts';

/** Rate and Poisson uncertainty from `counts` in `seconds`. */
export function rateFromCounts(counts: number, seconds: number): Measured {
  if (!(seconds > 0)) throw new RangeError(`exposure must be positive, got ${seconds} s`);
  return { value: counts / seconds, err: Math.sqrt(Math.max(0, counts)) / seconds };
}

export interface DeadTimeSetting {
  /** Dead time per event, s (Si SPADs: 20–50 ns, common practice). */
  tau: number;
  model: DeadTimeModel;
}

export interface RateCorrectionInput {
  /** Measured rate of the channel, counts/s (see rateFromCounts). */
  measured: Measured;
  /** Measured dark rate of the same channel (counts/s) from a dark run or entered by hand. */
  dark?: Measured;
  deadTime?: DeadTimeSetting;
}

export type RateCorrection =
  | {
      ok: true;
      /** Signal rate, counts/s: dead-time-corrected total minus dead-time-corrected dark. */
      net: Measured;
      /** Dead-time-corrected total, counts/s. */
      total: Measured;
      /** Dead-time-corrected dark rate, counts/s (0 ± 0 when uncalibrated). */
      dark: Measured;
      /** Dead-time loss fraction of the total (0 without a dead-time setting). */
      lossFraction: number;
      warnings: string[];
    }
  | { ok: false; reason: string };

/**
 * Correct one channel's rate. Order matters: the dead-time model applies to everything the detector
 * registers, so the total is corrected first and the dark rate (itself corrected for its own, much
 * smaller, loss) is subtracted afterwards (Ware, Migdall et al., J. Mod. Opt. 54 (2007)).
 */
export function correctRate(input: RateCorrectionInput): RateCorrection {
  const warnings: string[] = [];
  let total = input.measured;
  let dark: Measured = input.dark ?? { value: 0, err: 0 };
  let lossFraction = 0;
  if (input.deadTime) {
    const t = correctDeadTime(total, input.deadTime.tau, input.deadTime.model);
    if (!t.ok) return t;
    total = t.rate;
    lossFraction = t.lossFraction;
    warnings.push(...t.warnings);
    if (input.dark) {
      const d = correctDeadTime(dark, input.deadTime.tau, input.deadTime.model);
      if (!d.ok) return { ok: false, reason: `dark rate: ${d.reason}` };
      dark = d.rate;
    }
  }
  const net = { value: total.value - dark.value, err: Math.hypot(total.err, dark.err) };
  if (net.value < 0) warnings.push('dark rate exceeds the measured rate: check the dark calibration');
  return { ok: true, net, total, dark, lossFraction, warnings };
}

/**
 * Efficiency of output b relative to output a, η_b/η_a, from a calibration run in which both
 * outputs receive the same mean light (phase scanned over whole fringes, or a balanced split):
 * the ratio of their net rates with uncorrelated errors propagated.
 */
export function relativeEfficiency(netA: Measured, netB: Measured): Measured {
  if (!(netA.value > 0)) throw new RangeError('output a has no net signal: cannot calibrate efficiency');
  const r = netB.value / netA.value;
  return { value: r, err: Math.hypot(netB.err / netA.value, (r * netA.err) / netA.value) };
}
