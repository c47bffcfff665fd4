// The corrections the demo lab has measured for its channels: what an admin would have entered on
// each bench's channel settings. Derived from the bench's own simulator model, so dark-count and
// dead-time corrections bring the counts back to the simulator's truth. Pure: the seed writes them.
import type { DemoBench } from './demo-benches.ts';
import type { DetectorModel, SimulatorModel } from './interferometer.ts';
import { createSimulator } from './interferometer.ts';

export interface DemoCalibration {
  /** The measured dark rate, counts/s, and its 1σ (Poisson: √N / T). */
  darkRate: number;
  darkRateErr: number;
  /** Seconds of the capped-beam count it came from, and the counts it held. */
  darkSeconds: number;
  darkCounts: number;
  /** null where the channel's rate does not set the loss (herald-gated outputs, see below). */
  deadTimeNs: number | null;
  deadTimeModel: 'nonparalyzable';
  /** Detection efficiency relative to output a. */
  efficiency: number;
}

/** A capped-beam dark count of a detector's own clicks: a minute holds thousands of counts. */
export const DARK_COUNT_S = 60;
/**
 * The herald-gated outputs' background is far smaller (accidental coincidences of a detector's
 * darks with the heralds, ≈ 0.04/s on the 810 nm bench): a minute would hold two counts, so the
 * lab counted ten.
 */
export const GATED_DARK_COUNT_S = 600;

const capped = (d: DetectorModel): DetectorModel => ({ ...d, efficiency: 0 });

/**
 * The bench with its channels' detectors capped (efficiency 0), by channel key: the outputs' both
 * at once, the herald's alone. Herald-gated outputs are capped with the herald left running, since
 * their background in a measurement is the accidentals of their darks with the real heralds.
 */
export function cappedModels(model: SimulatorModel): Map<string, SimulatorModel> {
  const { a, b, herald } = model.channels;
  const outputs: SimulatorModel = { ...model, detectors: { a: capped(model.detectors.a), b: capped(model.detectors.b) } };
  const out = new Map([
    [a, outputs],
    [b, outputs],
  ]);
  if (herald !== undefined && model.source.kind === 'heralded') out.set(herald, { ...model, source: { ...model.source, herald: capped(model.source.herald) } });
  return out;
}

/**
 * Each channel's mean measured rate with its detector capped, through the simulator's own rates:
 * the darks through the dead time, with their afterpulses, as the counter records them.
 */
function cappedRates(model: SimulatorModel): Map<string, number> {
  return new Map([...cappedModels(model)].map(([key, m]) => [key, createSimulator(m, 0).expectedRates(0).ch[key]!]));
}

/** A value and its error as a lab writes them down: the error to two significant digits, the value to the same place. */
export function asWritten(value: number, err: number): [number, number] {
  if (!(err > 0)) return [value, err];
  const decimals = 1 - Math.floor(Math.log10(err));
  // toFixed, not a division by 10^decimals: 0.0082 stays 0.0082 rather than 0.008200000000000001.
  const round = (v: number) => (decimals >= 0 ? Number(v.toFixed(decimals)) : Math.round(v / 10 ** -decimals) * 10 ** -decimals);
  return [round(value), round(err)];
}

/** The bench's channel calibrations by channel key, as its lab measured them. */
export function demoCalibrations(bench: DemoBench): Map<string, DemoCalibration> {
  const { model } = bench;
  const heralded = model.source.kind === 'heralded';
  const rates = cappedRates(model);
  const detectorOf = (key: string): DetectorModel =>
    key === model.channels.a ? model.detectors.a : key === model.channels.b ? model.detectors.b : (model.source as { herald: DetectorModel }).herald;
  const out = new Map<string, DemoCalibration>();
  for (const c of bench.channels) {
    const gated = heralded && (c.key === model.channels.a || c.key === model.channels.b);
    const seconds = gated ? GATED_DARK_COUNT_S : DARK_COUNT_S;
    // The count such a measurement gives on average, so the seeded value sits on the truth.
    const n = Math.round(rates.get(c.key)! * seconds);
    const detector = detectorOf(c.key);
    const [darkRate, darkRateErr] = asWritten(n / seconds, Math.sqrt(n) / seconds);
    out.set(c.key, {
      darkRate,
      darkRateErr,
      darkSeconds: seconds,
      darkCounts: n,
      // A gated output loses counts at its detector's singles rate, which the counter does not
      // report; a correction from the gated rate would be wrong, so the lab leaves it unset.
      deadTimeNs: gated ? null : detector.deadTimeNs,
      // As the simulator's detectors lose counts (detector.ts, after Knoll ch. 4).
      deadTimeModel: 'nonparalyzable',
      // η_b/η_a as a balanced calibration run gives it (corrections.ts `relativeEfficiency`),
      // to three decimals; the herald is no output and keeps 1.
      efficiency: c.role === 'out_a' || c.role === 'out_b' ? Math.round((detector.efficiency / model.detectors.a.efficiency) * 1000) / 1000 : 1,
    });
  }
  return out;
}
