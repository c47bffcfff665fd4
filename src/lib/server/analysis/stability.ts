// Stability of a bench over a time range: overlapping Allan deviation of each channel's rate and of
// the interferometer phase, beside the white-Poisson reference √(R/τ) a rate cannot beat.
import { allanDeviation } from '../../analysis/allan.ts';
import { phaseAtHold, unfoldPhase } from '../../analysis/phase.ts';
import { queryCounts } from '../counts-query.ts';
import type { RateStability, Stability } from '../../stability.ts';
import { latestSweep } from './sweeps-store.ts';

/** Reads the range at `stepMs` and computes the Allan deviations (τ = step·2^k). */
export async function benchStability(benchId: string, from: number, to: number, stepMs: number): Promise<Stability> {
  const counts = await queryCounts(benchId, from, to, stepMs);
  const tau0 = stepMs / 1000;
  let missing = 0;
  const rates: RateStability[] = [];
  const series = new Map<string, number[]>();
  for (const info of counts.channelInfo) {
    const name = `${info.gateway}/${info.key}`;
    const col = counts.channels[name];
    if (!col) continue;
    const present = col.filter((v): v is number => v !== null).map((v) => v / tau0);
    missing = Math.max(missing, col.length - present.length);
    if (present.length < 4) continue;
    series.set(info.role, present);
    const meanRate = present.reduce((a, b) => a + b, 0) / present.length;
    rates.push({
      channel: name,
      role: info.role,
      meanRate,
      points: allanDeviation([present], tau0).map((p) => ({ ...p, poissonLimit: Math.sqrt(meanRate / p.tau) })),
    });
  }

  // Phase needs the fringe visibility: the latest sweep fit before the range's end.
  let phase: Stability['phase'] = null;
  const a = series.get('out_a');
  const b = series.get('out_b');
  const fit = await latestSweep(benchId, to);
  if (a && b && a.length === b.length && fit) {
    const visibility = fit.visibilityNet ?? fit.visibility;
    const folded = a.map((ra, i) => phaseAtHold(ra * tau0, (b[i] as number) * tau0, { visibility, efficiencyRatio: 1 }).value).filter(Number.isFinite);
    if (folded.length >= 4) phase = { visibility, points: allanDeviation([unfoldPhase(folded)], tau0) };
  }
  return { from, to, tau0, rates, phase, missingBuckets: missing };
}
