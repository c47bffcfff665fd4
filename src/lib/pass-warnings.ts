// A fitted pass's warnings as screens show them: read from the stored fit (sweeps-store.ts keeps
// them in `fit.warnings`; the contract's sweep shape carries `fit` as is), with a short form for a
// table cell. Pure: the run report (server) and the islands share it.
import { z } from 'zod';
import { FIT_WARNING } from './analysis/fit-warnings.ts';

export interface PassWarnings {
  /** The fit's own words, for a tooltip. */
  all: string[];
  /** The pass shows no significant fringe: its V ± σ measures no fringe and must not read as one. */
  noFringe: boolean;
}

const storedWarnings = z.object({ warnings: z.array(z.string().max(500)).max(20) });

const SHORT: Record<string, string> = {
  [FIT_WARNING.noFringe]: 'no significant fringe',
  [FIT_WARNING.notConverged]: 'fit not converged',
  [FIT_WARNING.atBound]: 'V at its bound 1',
};

/** A stored fit's warnings; none when it has no readable list (fits stored before warnings were kept). */
export function passWarnings(fit: unknown): PassWarnings {
  const parsed = storedWarnings.safeParse(fit);
  const all = parsed.success ? parsed.data.warnings : [];
  return { all, noFringe: all.includes(FIT_WARNING.noFringe) };
}

/** A warning short enough for a table cell: a known one's label, otherwise its text up to the colon. */
export function shortWarning(text: string): string {
  return SHORT[text] ?? (text.split(':')[0] ?? text).trim();
}

/** Every warning of a pass, short, in one line ('' when it has none). */
export function warningsLine(w: PassWarnings): string {
  return w.all.map(shortWarning).join(' · ');
}
