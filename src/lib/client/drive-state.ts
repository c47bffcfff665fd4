// What the piezo is doing, read from the scan positions (`x`) the gateway sends with its counts:
// holding (one position), moving (positions changing, with the way it goes), or unknown (no
// position lately). From the data itself, so it holds whoever sent the last command, and an
// observer sees it as well as the operator. Pure.

/** Positions older than this are not looked at (ms). */
export const DRIVE_WINDOW_MS = 2_000;
/** With no position newer than this, the state is unknown (ms). */
const STALE_MS = 5_000;
/** Change within the window below which the drive counts as holding (V): well under any scan step. */
const HOLD_TOLERANCE = 1e-6;

export type DriveState =
  | { kind: 'unknown' }
  | { kind: 'holding'; x: number; at: number }
  | { kind: 'moving'; x: number; at: number; way: 'up' | 'down'; lo: number; hi: number };

export class DriveTracker {
  /** (time of the bin's start, position), oldest first, within the window of the newest. */
  private samples: { t: number; x: number }[] = [];

  /** Adds one counts message's positions (bin i starts at t0 + i·dt). */
  add(t0: number, dt: number, x: readonly number[]): void {
    for (let i = 0; i < x.length; i++) {
      const t = t0 + i * dt;
      const last = this.samples.at(-1);
      // Late or replayed bins do not describe the drive now.
      if (last && t <= last.t) continue;
      this.samples.push({ t, x: x[i]! });
    }
    const newest = this.samples.at(-1);
    if (!newest) return;
    let drop = 0;
    while (drop < this.samples.length && this.samples[drop]!.t < newest.t - DRIVE_WINDOW_MS) drop++;
    if (drop) this.samples.splice(0, drop);
  }

  state(now: number): DriveState {
    const newest = this.samples.at(-1);
    if (!newest || now - newest.t > STALE_MS) return { kind: 'unknown' };
    let lo = Infinity;
    let hi = -Infinity;
    for (const s of this.samples) {
      lo = Math.min(lo, s.x);
      hi = Math.max(hi, s.x);
    }
    if (hi - lo <= HOLD_TOLERANCE * Math.max(1, Math.abs(newest.x))) return { kind: 'holding', x: newest.x, at: newest.t };
    // The way it goes now: the last change of position.
    let way: 'up' | 'down' = 'up';
    for (let i = this.samples.length - 1; i > 0; i--) {
      const d = this.samples[i]!.x - this.samples[i - 1]!.x;
      if (d !== 0) {
        way = d > 0 ? 'up' : 'down';
        break;
      }
    }
    return { kind: 'moving', x: newest.x, at: newest.t, way, lo, hi };
  }
}
