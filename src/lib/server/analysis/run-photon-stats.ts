// Photon statistics over a whole run, from its raw bins read batch by batch: each channel's Mandel Q
// over pairs of neighbouring bins at one drive position, and α (with a herald) or g2(0) over every
// bin that has both outputs and the coincidences, the expected triples or accidentals summed bin
// by bin as the live figures sum them (so a fringe swept or drifting through the run reads no false
// antibunching). What a run past its raw retention no longer has, it does not show.
import { alphaFromSums, BinProductSum, g2FromSums, MandelQSums, poissonQThroughDeadTime } from '../../analysis/photon-stats.ts';
import type { ValueErr } from '../../bench-figures.ts';
import type { ChannelCalibration, ChannelRole } from '../../channel-calibration.ts';
import { gatewayBatches } from '../export/export.ts';

/**
 * Bins read per gateway, at most: 3 million is 8 h of 10 ms bins and about a second of reading on
 * the 2-core machine this was measured on; a longer run's statistics cover its first part and say so.
 */
export const MAX_RUN_BINS = 3_000_000;
/** Fewer coincidences than this quote the Garwood interval's half-width, as the live figures do. */
const FEW_COINCIDENCES = 20;

export interface RunChannelQ {
  channel: string;
  label: string;
  role: ChannelRole;
  q: ValueErr;
  /** Pairs of neighbouring bins (no gap, the drive at one position) the variance was taken over. */
  pairs: number;
  /** The Q Poisson light reads through the channel's dead time at its mean rate; null without one. */
  poissonThroughDeadTime: number | null;
}

export interface RunPhotonStats {
  /** Bin width of the outputs' gateway, ms. */
  binMs: number;
  /** Bins read of the outputs' gateway. */
  bins: number;
  /** Where the read stopped short of the run's end (at `maxBins`), ms; null when it read the whole run. */
  readToMs: number | null;
  mandelQ: RunChannelQ[];
  /** Heralded α: triples over those expected without anticorrelation, Σᵢ N_GT,ᵢN_GR,ᵢ/N_G,ᵢ. */
  alpha: (ValueErr & { triples: number; expected: number }) | null;
  /** g2(0): coincidences over accidentals Σᵢ n_a,ᵢn_b,ᵢτ_c/Δt with the bench's window τ_c. */
  g2: (ValueErr & { coincidences: number; accidentals: number; windowNs: number }) | null;
}

/** A figure's error: the Garwood interval's half-width when few coincidences make the Gaussian one collapse. */
function quoted(value: number, err: number, counts: number, interval: { lower: number; upper: number }): ValueErr {
  return { value, err: counts < FEW_COINCIDENCES ? (interval.upper - interval.lower) / 2 : err };
}

/**
 * The statistics of `channels` (the run report's, with their roles) over [from, to). Null when no
 * channel has a raw bin there (past raw retention, or no data).
 */
export async function runPhotonStats(channels: ChannelCalibration[], from: number, to: number, coincidenceWindowNs: number, maxBins = MAX_RUN_BINS): Promise<RunPhotonStats | null> {
  const watched = channels.filter((c) => c.role !== 'aux');
  const outA = watched.find((c) => c.role === 'out_a');
  const outB = watched.find((c) => c.role === 'out_b');
  const herald = watched.find((c) => c.role === 'herald');
  // Coincidences belong to the outputs' gateway (the contract's cc); α and g2(0) need both outputs
  // there, and α the herald too, bin for bin.
  const ccGateway = outA && outB && outA.gateway === outB.gateway && (!herald || herald.gateway === outA.gateway) ? outA.gateway : null;
  const perChannel = new Map(watched.map((c) => [c, { sums: new MandelQSums(), nextT: Number.NaN, x: null as number | null, dtMs: 0, bins: 0 }]));
  const products = new BinProductSum();
  let coincidences = 0;
  let pairedBins = 0;
  let binMs = 0;
  let bins = 0;
  let readToMs: number | null = null;

  for (const gateway of new Set(watched.map((c) => c.gateway))) {
    const own = watched.filter((c) => c.gateway === gateway);
    let read = 0;
    rows: for await (const row of gatewayBatches(gateway, from, to)) {
      const at = own.map((c) => row.keys.indexOf(c.key));
      const [ia, ib, ih] = [outA, outB, herald].map((c) => (c && c.gateway === gateway ? row.keys.indexOf(c.key) : -1)) as [number, number, number];
      const pairs = gateway === ccGateway && row.cc && ia >= 0 && ib >= 0 && (!herald || ih >= 0);
      for (let j = 0; j < row.n; j++) {
        const t = row.t0 + j * row.dt;
        if (t < from) continue;
        if (t + row.dt > to) break rows;
        if (read >= maxBins) {
          readToMs = readToMs === null ? t : Math.min(readToMs, t);
          break rows;
        }
        read++;
        const x = row.x ? row.x[j]! : null;
        for (let k = 0; k < own.length; k++) {
          if (at[k]! < 0) continue;
          const count = row.counts[at[k]! * row.n + j]!;
          const s = perChannel.get(own[k]!)!;
          // Neighbours: no gap between the two bins, and the drive at the same position (a sweep's
          // step moves the rate by the fringe; two bins of one step are still a fair pair).
          s.sums.add(count, s.nextT === t && s.x === x);
          s.nextT = t + row.dt;
          s.x = x;
          s.dtMs = row.dt;
          s.bins++;
        }
        if (pairs) {
          const a = row.counts[ia * row.n + j]!;
          const b = row.counts[ib * row.n + j]!;
          // With a herald: N_GT·N_GR/N_G; without: n_a·n_b over Δt/τ_c.
          products.add(a, b, herald ? row.counts[ih * row.n + j]! : row.dt / 1000 / (coincidenceWindowNs * 1e-9));
          coincidences += row.cc![j]!;
          pairedBins++;
        }
      }
      if (gateway === (outA ?? watched[0])?.gateway) binMs = row.dt;
    }
    if (gateway === (outA ?? watched[0])?.gateway) bins = read;
  }

  if ([...perChannel.values()].every((s) => s.bins === 0)) return null;
  const mandelQ: RunChannelQ[] = [];
  for (const [c, s] of perChannel) {
    // A dark channel (shutter closed, no heralds) has no Q, as in the live figures.
    if (s.bins < 4 || s.sums.pairCount < 3 || s.sums.mean <= 0) continue;
    const q = s.sums.result();
    // The measured rate times the dead time is the fraction lost (mτ), as the live figures take it.
    const dead = c.deadTimeNs ? (q.mean / (s.dtMs / 1000)) * c.deadTimeNs * 1e-9 : null;
    mandelQ.push({
      channel: `${c.gateway}/${c.key}`,
      label: c.label,
      role: c.role,
      q: q.q,
      pairs: s.sums.pairCount,
      poissonThroughDeadTime: dead !== null && dead < 1 ? poissonQThroughDeadTime(dead) : null,
    });
  }
  let alpha: RunPhotonStats['alpha'] = null;
  let g2: RunPhotonStats['g2'] = null;
  if (pairedBins > 0 && herald) {
    const r = alphaFromSums(products, coincidences);
    if (r) alpha = { ...quoted(r.alpha.value, r.alpha.err, coincidences, r.triplesInterval), triples: coincidences, expected: r.expected };
  } else if (pairedBins > 0) {
    const r = g2FromSums(products, coincidences);
    if (r) g2 = { ...quoted(r.g2.value, r.g2.err, coincidences, r.interval), coincidences, accidentals: r.accidentals, windowNs: coincidenceWindowNs };
  }
  return { binMs, bins, readToMs, mandelQ, alpha, g2 };
}
