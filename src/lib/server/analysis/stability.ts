// Stability of a bench over a time range: overlapping Allan deviation of each channel's rate and of
// the interferometer phase, beside the white-Poisson reference √(R/τ) a rate cannot beat. Every
// series is split at missing buckets and the Allan deviation pooled over the stretches, so no
// difference spans a gap and τ is a true time.
import { allanDeviation, contiguousStretches } from '../../analysis/allan.ts';
import { countsBeforeDeadTime } from '../../analysis/dead-time.ts';
import { heldPhaseStretches } from '../../analysis/held-phase.ts';
import { channelDeadTime } from '../../channel-calibration.ts';
import type { RateStability, Stability } from '../../stability.ts';
import { shownVisibility } from '../../sweep-visibility.ts';
import { benchCalibrations } from '../benches.ts';
import { queryCounts } from '../counts-query.ts';
import { getDbHandle } from '../db/index.ts';
import { latestSweep } from './sweeps-store.ts';

/**
 * The drive's position per bucket where it held still through the bucket (every bin's `x` the
 * same, the live figures' test), else null; 0 stands for a gateway that sends no `x`, which has no
 * drive to move. Read from the raw bins whatever the step, since rollups keep no `x`; aggregated
 * in the database so a long range sends one row per bucket. Buckets without raw bins (past their
 * retention) are unknown, hence null.
 */
async function heldPositions(gatewayId: string, t0: number, step: number, points: number): Promise<(number | null)[]> {
  const end = t0 + points * step;
  const { rows } = await getDbHandle().pool.query<{ bucket: number; lo: number | null; hi: number | null; withx: number; bins: number }>(
    `with c as (
       (select t0, dt, n, x from count_batches where gateway_id = $1 and t0 <= $2 order by t0 desc limit 1)
       union all
       (select t0, dt, n, x from count_batches where gateway_id = $1 and t0 > $2 and t0 < $3)
     )
     select floor((c.t0 + (o.j - 1) * c.dt - $2)::float8 / $4)::int as bucket,
            min(o.v) as lo, max(o.v) as hi, count(o.v)::int as withx, count(*)::int as bins
       from c cross join lateral unnest(coalesce(c.x, array_fill(null::float8, array[c.n]))) with ordinality as o(v, j)
      group by 1`,
    [gatewayId, t0, end, step],
  );
  const held = new Array<number | null>(points).fill(null);
  for (const r of rows) {
    if (r.bucket < 0 || r.bucket >= points) continue;
    if (r.withx === 0) held[r.bucket] = 0;
    else if (r.withx === r.bins && r.lo === r.hi) held[r.bucket] = r.lo;
  }
  return held;
}

/** Reads the range at `stepMs` and computes the Allan deviations (τ = step·2^k). */
export async function benchStability(benchId: string, from: number, to: number, stepMs: number): Promise<Stability> {
  const counts = await queryCounts(benchId, from, to, stepMs);
  const tau0 = stepMs / 1000;
  // A bucket recorded only in part (a gap's edge) is no sample over τ₀: its sum would read as a
  // rate drop, and the Allan deviation needs samples of equal length. It splits the series as a
  // missing one does. Whole within one bin: a width that does not divide the step leaves rollup
  // buckets a bin over or under it (CountsResult.binMs).
  const whole = (col: (number | null)[], gateway: string) => {
    const covered = Object.hasOwn(counts.coveredMs, gateway) ? counts.coveredMs[gateway]! : [];
    const slack = Object.hasOwn(counts.binMs, gateway) ? counts.binMs[gateway]! : 0;
    return col.map((v, i) => (v !== null && (covered[i] ?? 0) > counts.step - slack ? v : null));
  };
  let missing = 0;
  const rates: RateStability[] = [];
  for (const info of counts.channelInfo) {
    const name = `${info.gateway}/${info.key}`;
    const stored = counts.channels[name];
    if (!stored) continue;
    const col = whole(stored, info.gateway);
    const stretches = contiguousStretches(col.map((v) => (v === null ? null : v / tau0)));
    const present = stretches.reduce((n, s) => n + s.length, 0);
    missing = Math.max(missing, col.length - present);
    if (present < 4) continue;
    const meanRate = stretches.reduce((sum, s) => s.reduce((a, b) => a + b, sum), 0) / present;
    rates.push({
      channel: name,
      role: info.role,
      meanRate,
      points: allanDeviation(stretches, tau0).map((p) => ({ ...p, poissonLimit: Math.sqrt(meanRate / p.tau) })),
    });
  }

  // Phase: both outputs on the same buckets, with the channel calibration the live figures use and
  // the visibility of the latest sweep fit before the range's end; dark counts come off exactly
  // when that visibility is the net (dark-subtracted) one, so the two agree.
  let phase: Stability['phase'] = null;
  const cals = await benchCalibrations(benchId);
  const outA = cals.find((c) => c.role === 'out_a');
  const outB = cals.find((c) => c.role === 'out_b');
  const storedA = outA && counts.channels[`${outA.gateway}/${outA.key}`];
  const storedB = outB && counts.channels[`${outB.gateway}/${outB.key}`];
  const a = outA && storedA && whole(storedA, outA.gateway);
  const b = outB && storedB && whole(storedB, outB.gateway);
  const fit = await latestSweep(benchId, to);
  if (outA && outB && a && b && fit && outA.efficiency > 0) {
    const { value: visibility, net } = shownVisibility(fit);
    const cal = {
      visibility,
      efficiencyRatio: outB.efficiency / outA.efficiency,
      darkA: net ? (outA.darkRate ?? 0) * tau0 : 0,
      darkB: net ? (outB.darkRate ?? 0) * tau0 : 0,
    };
    const held = await heldPositions(outA.gateway, counts.t0, counts.step, a.length);
    // The fitted V is the true counts' where a dead time is set: so are the buckets it reads.
    const beforeDeadTime = (series: (number | null)[], c: typeof outA) => {
      const dt = channelDeadTime(c);
      return dt ? series.map((v) => (v === null ? null : countsBeforeDeadTime(v, tau0, dt.tau, dt.model))) : series;
    };
    const stretches = heldPhaseStretches({ a: beforeDeadTime(a, outA), b: beforeDeadTime(b, outB), held }, cal);
    const points = allanDeviation(stretches, tau0);
    if (points.length) phase = { visibility, net, points, heldBuckets: stretches.reduce((n, s) => n + s.length, 0), stretches: stretches.length };
  }
  return { from, to, tau0, rates, phase, missingBuckets: missing };
}
