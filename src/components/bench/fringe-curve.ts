// The fitted fringe model as rate curves over the scan coordinate, for drawing over the data.
import { countsThroughDeadTime, type DeadTimeModel } from '../../lib/analysis/dead-time.ts';
import { expectedCounts, type FringeParams } from '../../lib/analysis/fringe-model.ts';
import type { SweepFit } from '../../lib/client/api.ts';

export const CURVE_POINTS = 300;

/** Model rates (counts/s) of both outputs at `x` from a stored fit (amplitudes per bin of fit.dtMs). */
export function fitRates(fit: SweepFit, x: Float64Array, outA: Float64Array, outB: Float64Array): void {
  const params: FringeParams = {
    amplitudeA: fit.amplitudeA,
    amplitudeB: fit.amplitudeB,
    visibility: fit.visibility,
    period: fit.period,
    phase: fit.phase,
    quadratic: fit.quadratic,
  };
  const dark = fit.shown === 'net' && fit.darkPerBin ? fit.darkPerBin : { a: 0, b: 0 };
  const perS = 1000 / fit.dtMs;
  // The fit's counts are true ones where it saw them through a dead time: drawn as recorded.
  const seen = (counts: number, t: { tauOver: number; model: DeadTimeModel } | null | undefined) => (t ? countsThroughDeadTime(counts, t.tauOver, t.model) : counts);
  for (let i = 0; i < x.length; i++) {
    const m = expectedCounts(x[i]!, params, dark.a, dark.b);
    outA[i] = seen(m.a, fit.deadTimePerBin?.a) * perS;
    outB[i] = seen(m.b, fit.deadTimePerBin?.b) * perS;
  }
}
