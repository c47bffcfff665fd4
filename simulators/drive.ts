// The piezo drive's command state machine (`sweep`, `hold`, `stop` of the wire contract), as a
// pure function of simulated time: the voltage at any instant follows from the last accepted
// command and when it was accepted, so batches of any size see the same staircase.
import type { CommandBody } from '../src/lib/contract/wire.ts';
import type { ScanRange } from './piezo.ts';

export type CommandResult = { ok: true } | { ok: false; error: string };

export interface DriveStatus {
  /** `hold` also after a sweep has run all its passes (it rests at `from`). */
  mode: 'sweep' | 'hold';
  /** Drive voltage, V. */
  x: number;
  /** Which way the sweep is stepping the voltage; null while holding. */
  direction: 'up' | 'down' | null;
  /** Up-and-down passes completed by the present (or last) sweep. */
  sweepsDone: number;
}

interface Sweep {
  from: number;
  sign: 1 | -1;
  span: number;
  step: number;
  dwell: number;
  sweeps: number;
  /** Steps in one one-way pass; the last one is shorter when `step` does not divide the span. */
  steps: number;
  startMs: number;
  endMs: number;
}

export class ScanDrive {
  private sweep: Sweep | null = null;
  private heldX: number;

  constructor(
    private readonly range: ScanRange,
    startX: number,
  ) {
    this.heldX = startX;
  }

  /** Applies a command at simulated time `nowMs`; refuses anything outside the scan range. */
  command(cmd: CommandBody, nowMs: number): CommandResult {
    if (cmd.op === 'stop') {
      this.heldX = this.voltageAt(nowMs);
      this.sweep = null;
      return { ok: true };
    }
    if (cmd.op === 'hold') {
      const bad = this.outOfRange('x', cmd.x);
      if (bad) return { ok: false, error: bad };
      this.heldX = cmd.x;
      this.sweep = null;
      return { ok: true };
    }
    const bad = this.outOfRange('from', cmd.from) ?? this.outOfRange('to', cmd.to);
    if (bad) return { ok: false, error: bad };
    if (cmd.from === cmd.to) return { ok: false, error: 'sweep needs from ≠ to' };
    if (!(cmd.step > 0) || !Number.isFinite(cmd.step)) return { ok: false, error: 'step must be a positive number of volts' };
    if (!(cmd.dwell > 0) || !Number.isFinite(cmd.dwell)) return { ok: false, error: 'dwell must be a positive number of ms' };
    if (!Number.isInteger(cmd.sweeps) || cmd.sweeps < 1) return { ok: false, error: 'sweeps must be a whole number ≥ 1' };
    const span = Math.abs(cmd.to - cmd.from);
    // The tolerance keeps 40 / 0.05 from counting as 800.000…1 steps.
    const steps = Math.max(1, Math.ceil(span / cmd.step - 1e-9));
    this.sweep = {
      from: cmd.from,
      sign: cmd.to > cmd.from ? 1 : -1,
      span,
      step: cmd.step,
      dwell: cmd.dwell,
      sweeps: cmd.sweeps,
      steps,
      startMs: nowMs,
      endMs: nowMs + 2 * steps * cmd.sweeps * cmd.dwell,
    };
    this.heldX = cmd.from;
    return { ok: true };
  }

  /** Drive voltage at simulated time `t` (ms), V. */
  voltageAt(t: number): number {
    const sw = this.sweep;
    if (!sw || t >= sw.endMs) return this.heldX;
    const j = stepIndex(sw, t) % (2 * sw.steps);
    const travelled = j <= sw.steps ? Math.min(j * sw.step, sw.span) : sw.span - (j - sw.steps) * sw.step;
    // Rounded to the µV (far below any DAC step) so the batches carry 12.05, not 12.050000000000001.
    return Math.round((sw.from + sw.sign * travelled) * 1e6) / 1e6;
  }

  /** Next instant after `t` at which the voltage steps, ms; Infinity while holding. */
  nextChangeAfter(t: number): number {
    const sw = this.sweep;
    if (!sw || t >= sw.endMs) return Infinity;
    return sw.startMs + (stepIndex(sw, t) + 1) * sw.dwell;
  }

  status(t: number): DriveStatus {
    const sw = this.sweep;
    const x = this.voltageAt(t);
    if (!sw) return { mode: 'hold', x, direction: null, sweepsDone: 0 };
    if (t >= sw.endMs) return { mode: 'hold', x, direction: null, sweepsDone: sw.sweeps };
    const i = stepIndex(sw, t);
    const forward = i % (2 * sw.steps) < sw.steps;
    return { mode: 'sweep', x, direction: forward === sw.sign > 0 ? 'up' : 'down', sweepsDone: Math.floor(i / (2 * sw.steps)) };
  }

  private outOfRange(name: string, v: number): string | undefined {
    if (!Number.isFinite(v)) return `${name} must be a finite number of volts`;
    if (v < this.range.min || v > this.range.max) {
      return `${name} = ${v} V is outside the scan range ${this.range.min}…${this.range.max} V`;
    }
    return undefined;
  }
}

/**
 * Steps taken by time t. The 1e-9 keeps a fractional dwell from rounding a step boundary into the
 * step before, which would hold the old voltage for a whole extra dwell.
 */
function stepIndex(sw: Sweep, t: number): number {
  return Math.floor((t - sw.startMs) / sw.dwell + 1e-9);
}
