// Stability of a bench over a time range: overlapping Allan deviation of each channel's rate and of
// the interferometer phase, each beside the floor its counting noise alone gives (√(R/τ) for a
// rate). Only buckets where the drive held still count, for the rates as for the phase: a sweep or
// a move to a new hold changes the rates by the fringe's whole depth, and read as drift it put the
// rate curves some 50× above their floor. Every series is split at missing buckets, moves and new
// hold positions (the phase also at buckets read near a fringe extreme), and the Allan deviation
// pooled over the stretches, so no difference spans a gap and τ is a true time.
import { allanDeviation, whiteNoiseFloor, type AllanPoint } from '../../analysis/allan.ts';
import { countsBeforeDeadTime } from '../../analysis/dead-time.ts';
import { heldPhaseStretches, heldStretches } from '../../analysis/held-phase.ts';
import { poissonQThroughDeadTime } from '../../analysis/photon-stats.ts';
import { phaseFloor } from '../../analysis/sensitivity.ts';
import { channelDeadTime, type ChannelCalibration } from '../../channel-calibration.ts';
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
 * retention) are unknown, hence null, unless no raw bin of the range carries an `x`: a gateway
 * without positions holds throughout. Null when the range has no raw bin of the gateway at all.
 */
async function heldPositions(gatewayId: string, t0: number, step: number, points: number): Promise<(number | null)[] | null> {
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
  const inRange = rows.filter((r) => r.bucket >= 0 && r.bucket < points);
  if (inRange.length === 0) return null;
  if (inRange.every((r) => r.withx === 0)) return new Array<number | null>(points).fill(0);
  const held = new Array<number | null>(points).fill(null);
  for (const r of inRange) {
    if (r.withx === 0) held[r.bucket] = 0;
    else if (r.withx === r.bins && r.lo === r.hi) held[r.bucket] = r.lo;
  }
  return held;
}

/** Each point with the floor white noise of the given variances gives at its τ. */
function withFloor(points: AllanPoint[], variances: ArrayLike<number>[], tau0: number): (AllanPoint & { poissonLimit: number })[] {
  return points.flatMap((p) => {
    const floor = whiteNoiseFloor(variances, Math.round(p.tau / tau0));
    return floor === null ? [] : [{ ...p, poissonLimit: floor }];
  });
}

/**
 * Reads the range at `stepMs` and computes the Allan deviations (τ = step·2^k) over the buckets
 * where the drive held still. `channels`: the calibrations and roles to read by, the bench's own
 * when unset (a run report passes its run's, where an imported run's channels are its outputs).
 */
export async function benchStability(benchId: string, from: number, to: number, stepMs: number, opts: { channels?: ChannelCalibration[] } = {}): Promise<Stability> {
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
  // Where each gateway's drive held still, read once per gateway.
  const heldBy = new Map<string, Promise<(number | null)[] | null>>();
  const heldOf = (gateway: string, points: number) => {
    if (!heldBy.has(gateway)) heldBy.set(gateway, heldPositions(gateway, counts.t0, counts.step, points));
    return heldBy.get(gateway)!;
  };
  const cals = opts.channels ?? (await benchCalibrations(benchId));
  let missing = 0;
  const rates: RateStability[] = [];
  for (const info of counts.channelInfo) {
    const name = `${info.gateway}/${info.key}`;
    const cal = cals.find((c) => c.gateway === info.gateway && c.key === info.key);
    const stored = counts.channels[name];
    if (!stored) continue;
    const col = whole(stored, info.gateway);
    // A channel with nothing in the range (an import's, another recording's) is not a series with gaps.
    const absent = col.filter((v) => v === null).length;
    if (absent === col.length) continue;
    missing = Math.max(missing, absent);
    // Past raw retention the drive's state is unknown (rollups keep no positions): a range with no
    // raw bin of the gateway left is read whole, sweeps and all, and says so; one with some reads
    // the buckets whose holding is known.
    const held = await heldOf(info.gateway, col.length);
    const covers = held ? 'held' : 'whole';
    const { runs, stretches } = heldStretches(col, held ?? col.map(() => 0));
    const buckets = stretches.reduce((n, s) => n + s.length, 0);
    if (buckets < 4) continue;
    const rateStretches = stretches.map((s) => s.map((v) => v / tau0));
    const meanRate = rateStretches.reduce((sum, s) => s.reduce((a, b) => a + b, sum), 0) / buckets;
    // Poisson counts: the variance of a bucket's count is its mean, so its rate n/τ₀ has variance
    // rate/τ₀ (the measured count standing for its mean). Through a dead time τ_d the counts are
    // sub-Poissonian, variance n(1 − mτ_d)² at measured rate m (poissonQThroughDeadTime): 10 % less
    // noise at an InGaAs detector's 10 kc/s behind 10 µs, so the floor takes it where one is set.
    const dt = cal ? channelDeadTime(cal) : null;
    const variances = rateStretches.map((s) => s.map((r) => (r / tau0) * (dt && r * dt.tau < 1 ? 1 + poissonQThroughDeadTime(r * dt.tau) : 1)));
    const points = withFloor(allanDeviation(rateStretches, tau0), variances, tau0);
    rates.push({ channel: name, role: cal?.role ?? info.role, covers, meanRate, buckets, stretches: runs.length, deadTime: dt !== null, points });
  }

  // Phase: both outputs on the same buckets, with the channel calibration the live figures use and
  // the visibility of the latest sweep fit before the range's end; dark counts come off exactly
  // when that visibility is the net (dark-subtracted) one, so the two agree.
  let phase: Stability['phase'] = null;
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
    // The fitted V is the true counts' where a dead time is set: so are the buckets it reads.
    const beforeDeadTime = (series: (number | null)[], c: typeof outA) => {
      const dt = channelDeadTime(c);
      return dt ? series.map((v) => (v === null ? null : countsBeforeDeadTime(v, tau0, dt.tau, dt.model))) : series;
    };
    const trueA = beforeDeadTime(a, outA);
    const trueB = beforeDeadTime(b, outB);
    const held = await heldOf(outA.gateway, a.length);
    const stretches = held ? heldPhaseStretches({ a: trueA, b: trueB, held }, cal) : [];
    // The floor: per bucket, the Cramér–Rao bound of its two outputs' counts at its own phase
    // (phaseFloor, the live tile's floor), 1/(V√N) at mid-fringe and more away from it below V = 1.
    // Its dark counts are Poisson noise with no fringe: where the visibility is net they are taken
    // off the counts and counted back as noise; where it is raw, the counts and V hold them already.
    // The stretches leave out the buckets near a fringe extreme (heldPhaseStretches), where the bound
    // diverges. A bucket's signal is its counts less the darks of the calibration.
    const variances = stretches.map(({ run, phase: theta }) =>
      Float64Array.from(theta, (phi, k) => {
        const i = run.start + k;
        return phaseFloor(trueA[i]! - cal.darkA, trueB[i]! - cal.darkB, visibility, phi, cal.darkA, cal.darkB) ** 2;
      }),
    );
    const points = withFloor(allanDeviation(stretches.map((s) => s.phase), tau0), variances, tau0);
    if (points.length) phase = { visibility, net, points, heldBuckets: stretches.reduce((n, s) => n + s.phase.length, 0), stretches: stretches.length };
  }
  return { from, to, tau0, rates, phase, missingBuckets: missing };
}
