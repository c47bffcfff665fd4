// What makes a sweep a sweep, whatever the bench's limits: a span to cross, in a number of steps a
// drive can resolve, over a time someone means to wait. Pure; checked before a command leaves the
// server (contract, "Commands and results": 422 with the reason).
import type { CommandBody } from '../../contract/wire.ts';

/**
 * Steps per pass from `from` to `to`. A piezo driver's DAC resolves at most 2^16 levels across its
 * range (16 bits is the common top of the line), so finer steps repeat the same voltage; and the
 * fitter sums one step's bins into one point, so 65,536 points per pass is already 30 times what
 * it fits (2,000). A step of 1e-7 V over 40 V (4e8 steps) is a typo, not a scan.
 */
export const MAX_STEPS_PER_PASS = 65_536;

/**
 * A whole command's run time (all passes up and back), ms: a week. The longest unattended run a
 * lab plans (a drift study over a long weekend) fits; past it is a unit typed wrong, and a long
 * study can always be sent again.
 */
export const MAX_SWEEP_MS = 7 * 24 * 3_600_000;

/** Steps per pass as the gateway counts them; the tolerance keeps 40 / 0.05 from counting as 800.000…1. */
export function stepsPerPass(from: number, to: number, step: number): number {
  return Math.max(1, Math.ceil(Math.abs(to - from) / step - 1e-9));
}

/** Null when the sweep can be run, else the reason it cannot. Other commands always can. */
export function sweepShapeViolation(cmd: CommandBody): string | null {
  if (cmd.op !== 'sweep') return null;
  // A downward sweep (from > to) is a sweep too: gateways run it from `from` towards `to`.
  if (cmd.from === cmd.to) return `from and to are both ${cmd.from} V: a sweep needs a span`;
  const steps = stepsPerPass(cmd.from, cmd.to, cmd.step);
  if (steps > MAX_STEPS_PER_PASS) return `step ${cmd.step} V makes ${steps} steps from ${cmd.from} to ${cmd.to} V; at most ${MAX_STEPS_PER_PASS} per pass`;
  // Each of `sweeps` goes there and back.
  const ms = 2 * steps * cmd.dwell * cmd.sweeps;
  if (ms > MAX_SWEEP_MS) return `${cmd.sweeps} sweeps of ${steps} steps at ${cmd.dwell} ms take ${(ms / 86_400_000).toFixed(1)} days; at most ${MAX_SWEEP_MS / 86_400_000} days per command`;
  return null;
}
