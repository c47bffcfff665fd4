// A fitted pass's phase as screens show it: at the middle of the pass, where the fit pins it down,
// rather than φ at x = 0, which older fits kept and which is an extrapolation (over a 50–75 V scan
// its error was ~50× larger). Read from the stored fit; fits stored before carry only φ. Pure.
import { z } from 'zod';

const stored = z.object({ phaseAtCenter: z.object({ value: z.number(), err: z.number() }), center: z.number() });

export interface PassPhase {
  value: number;
  err: number;
  /** Scan coordinate the phase is read at; null for φ at x = 0. */
  at: number | null;
}

export function passPhase(s: { phase: number; phaseErr: number; fit: unknown }): PassPhase {
  const p = stored.safeParse(s.fit);
  return p.success ? { value: p.data.phaseAtCenter.value, err: p.data.phaseAtCenter.err, at: p.data.center } : { value: s.phase, err: s.phaseErr, at: null };
}
