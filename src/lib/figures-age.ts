// When a bench's live figures stop standing for the bench now: one rule for the lab overview and
// the bench page, so both call the same figures stale at the same moment. Pure.

/**
 * Figures whose newest bin ended longer ago than this are stale, ms. The server recomputes them
 * about once a second from the bins as they arrive, so their age is normally a batch period plus
 * the trip (1–2 s); 10 s is several batches missed, not one late. The age compares the gateway's
 * bin times with the reader's clock, so a clock more than a few seconds off shows too.
 */
export const FIGURES_STALE_MS = 10_000;

export interface FiguresStaleness {
  /** Newest bin's end to now, ms (never negative: a clock a little ahead reads 0). */
  ageMs: number;
  /** Every gateway of the bench is offline: nothing newer can come, however young the figures. */
  offline: boolean;
}

/** Why and how the figures are stale, or null while they are current. */
export function figuresStaleness(at: number, now: number, gatewaysOnline: number, gatewaysTotal: number): FiguresStaleness | null {
  const ageMs = Math.max(0, now - at);
  const offline = gatewaysTotal > 0 && gatewaysOnline === 0;
  return offline || ageMs > FIGURES_STALE_MS ? { ageMs, offline } : null;
}
