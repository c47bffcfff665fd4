// The visibility trend's axes, pure: the time span drawn and the visibility range with room above
// and below the points, and tick labels that all carry the same decimals.

/** Narrowest time span drawn, s: two sweeps seconds apart would otherwise get millisecond ticks. */
const MIN_SPAN_S = 120;
/** Room above and below the points, as a share of their spread, at least MIN_PAD: a point never sits on an edge. */
const PAD_SHARE = 0.15;
const MIN_PAD = 0.005;
/** The range shown with nothing to draw: where visibilities worth watching lie. */
const EMPTY_RANGE: [number, number] = [0.8, 1];

/**
 * The x range in s. `span`: the asked span (a run's; null's end is now, the live view's); without
 * it the points'. With nothing to draw, a live view shows its whole `windowS` up to now, the span its
 * empty message names. At least MIN_SPAN_S wide.
 */
export function trendXRange(span: { from: number | null; to: number | null } | undefined, dataMin: number | null, dataMax: number | null, nowS: number, windowS?: number): [number, number] {
  const to = span ? (span.to === null ? nowS : span.to / 1000) : (dataMax ?? nowS);
  if (dataMin === null && span && span.from === null && span.to === null && windowS) return [to - windowS, to];
  const from = span?.from != null ? span.from / 1000 : (dataMin ?? to);
  if (to - from >= MIN_SPAN_S) return [from, to];
  // Too short to read: widen it, around its middle when both ends are fixed (a short run), else back from now.
  if (span && span.from !== null && span.to !== null) {
    const mid = (from + to) / 2;
    return [mid - MIN_SPAN_S / 2, mid + MIN_SPAN_S / 2];
  }
  return [to - MIN_SPAN_S, to + 5];
}

/**
 * The y range: the points (with their 1σ band) and the alarm limit, padded on both sides. The top
 * may pass 1 so a point at V ≈ 1 has room above it; no tick is drawn there (trendYSplits).
 */
export function trendYRange(min: number | null, max: number | null, limit: number | null): [number, number] {
  if (min == null || max == null || !(max > 0)) return limit !== null && limit < EMPTY_RANGE[0] ? [Math.max(0, limit - 0.05), 1] : EMPTY_RANGE;
  const lo = Math.min(min, limit ?? min);
  const hi = Math.max(max, limit ?? max);
  const pad = Math.max(MIN_PAD, PAD_SHARE * (hi - lo));
  return [Math.max(0, lo - pad), hi + pad];
}

/** Decimals that write every multiple of a tick step alike: 0.02 → 2 ("0.78", "0.80"), 0.005 → 3, 0.1 → 1. */
export function stepDecimals(step: number): number {
  if (!(step > 0) || !Number.isFinite(step)) return 2;
  // The step's last significant decimal; the small tolerance absorbs float steps like 0.30000000000000004.
  for (let d = 0; d < 10; d++) if (Math.abs(Math.round(step * 10 ** d) - step * 10 ** d) < 1e-6) return d;
  return 10;
}

/** Ticks at multiples of the step within the range, none above 1 (the room above the points holds no visibility). */
export function trendYSplits(min: number, max: number, step: number): number[] {
  if (!(step > 0) || !(max >= min)) return [];
  const d = stepDecimals(step);
  const out: number[] = [];
  // Integer multiples, rounded to the step's decimals: summing the step would drift (0.1 + 0.2 …).
  for (let k = Math.ceil(min / step - 1e-9); k * step <= Math.min(max, 1) + step * 1e-9; k++) out.push(Number((k * step).toFixed(d)));
  return out;
}

/** Tick labels, all at the step's decimals: "0.78", "0.80", never "0.8" beside "0.78". */
export function trendYTicks(ticks: readonly number[], step: number): string[] {
  const d = stepDecimals(step);
  return ticks.map((t) => t.toFixed(d));
}
