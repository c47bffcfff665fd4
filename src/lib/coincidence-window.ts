// A bench's coincidence window: the full resolving window τ_c of its coincidence counter, ns. g2(0)
// divides the coincidences by the accidentals N₁N₂τ_c/T, so a wrong window scales g2(0) by
// (true window)/(set window). Pure: the admin form, the server's validation and the readout share it.
import { z } from 'zod';
import { formNumber } from './form-number.ts';

/**
 * Bounds, ns. Above 0.01 ns (10 ps): time taggers resolve a few ps and detector jitter is ≥ ~10 ps,
 * so a shorter window is a unit slip (µs typed as ns), not a setting. At most 1000 ns (1 µs): the
 * accidentals formula needs R·τ_c ≪ 1, which at 1 µs holds only below ~10⁵ counts/s; a longer
 * window is also a unit slip the other way.
 */
export const COINCIDENCE_WINDOW_NS = { min: 0.01, max: 1000 } as const;

/** The seeded and default window (the column's default), ns. */
export const DEFAULT_COINCIDENCE_WINDOW_NS = 2;

export const coincidenceWindowSchema = z.object({
  coincidenceWindowNs: formNumber((n) =>
    n
      .min(COINCIDENCE_WINDOW_NS.min, `below ${COINCIDENCE_WINDOW_NS.min} ns (10 ps)? give it in ns`)
      .max(COINCIDENCE_WINDOW_NS.max, `above ${COINCIDENCE_WINDOW_NS.max} ns (1 µs)? give it in ns`),
  ),
});

/** "window 2.0 ns", "window 0.25 ns", "window 120 ns": two significant figures at least. */
export function formatWindow(ns: number): string {
  const digits = ns >= 100 ? 0 : ns >= 1 ? 1 : Math.min(3, Math.max(2, 1 - Math.floor(Math.log10(ns))));
  return `window ${ns.toFixed(digits)} ns`;
}
