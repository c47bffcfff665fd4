// The steps a range is read at, pure: shared by the history, the run report's charts and the run
// report's stability, which the server computes at the step the history's card asks for. Every
// step is a multiple of the usual bin widths (1, 10, 100 ms), so the server can sum bins into it exactly.
const NICE_STEPS_MS = [100, 200, 500, 1_000, 2_000, 5_000, 10_000, 30_000, 60_000, 120_000, 300_000, 600_000, 1_800_000, 3_600_000, 86_400_000];

/** Smallest nice step that keeps the points at or under one per `pixels`. */
export function pickStep(spanMs: number, pixels: number): number {
  const want = spanMs / Math.max(100, pixels);
  return NICE_STEPS_MS.find((s) => s >= want) ?? NICE_STEPS_MS[NICE_STEPS_MS.length - 1]!;
}

/** Points wanted in a stability series: τ up to τ₀·2⁹ (edf ≈ 4 there) with many degrees of freedom at short τ. */
const STABILITY_POINTS = 2000;
/** Above this span, ms, the series is read at whole seconds, which the 1 s rollups serve fast. */
const ROLLUP_SPAN_MS = 5 * 60_000;

/** τ₀ (ms) for the stability of a span: about 2000 buckets, whole seconds beyond a few minutes. */
export function stabilityStep(spanMs: number): number {
  const step = pickStep(spanMs, STABILITY_POINTS);
  return spanMs > ROLLUP_SPAN_MS ? Math.max(1_000, step) : step;
}
