// The bench's admin-set drive limits, checked before a command leaves the server (contract,
// "Commands and results"). Pure.
import type { CommandBody } from '../../contract/wire.ts';

export interface DriveLimits {
  /** Volts. */
  driveMin: number;
  driveMax: number;
  /** Largest step an operator may ask for, volts. */
  driveMaxStep: number;
  /** Shortest dwell per step, ms. */
  driveMinDwellMs: number;
}

/** Null when the command is within the limits, else the reason it is refused. */
export function driveLimitViolation(cmd: CommandBody, l: DriveLimits): string | null {
  const inRange = (v: number) => v >= l.driveMin && v <= l.driveMax;
  const range = `${l.driveMin}–${l.driveMax} V`;
  switch (cmd.op) {
    case 'stop':
      return null;
    case 'hold':
      return inRange(cmd.x) ? null : `x ${cmd.x} V is outside the bench's drive range ${range}`;
    case 'sweep':
      if (!inRange(cmd.from)) return `from ${cmd.from} V is outside the bench's drive range ${range}`;
      if (!inRange(cmd.to)) return `to ${cmd.to} V is outside the bench's drive range ${range}`;
      if (cmd.step > l.driveMaxStep) return `step ${cmd.step} V is above the bench's largest step ${l.driveMaxStep} V`;
      if (cmd.dwell < l.driveMinDwellMs) return `dwell ${cmd.dwell} ms is below the bench's shortest dwell ${l.driveMinDwellMs} ms`;
      return null;
  }
}
