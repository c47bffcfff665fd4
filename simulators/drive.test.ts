import { describe, expect, it } from 'vitest';
import { ScanDrive } from './drive.ts';

const range = { min: 0, max: 40 }; // V

/** Voltages at the middle of each dwell from time `start`, for `n` dwells. */
function staircase(d: ScanDrive, start: number, dwell: number, n: number): number[] {
  return Array.from({ length: n }, (_, i) => d.voltageAt(start + (i + 0.5) * dwell));
}

describe('scan drive', () => {
  it('steps up and down for the asked number of passes, then rests at `from`', () => {
    const d = new ScanDrive(range, 0);
    expect(d.command({ op: 'sweep', from: 10, to: 11, step: 0.25, dwell: 20, sweeps: 2 }, 1000)).toEqual({ ok: true });
    const pass = [10, 10.25, 10.5, 10.75, 11, 10.75, 10.5, 10.25];
    expect(staircase(d, 1000, 20, 17)).toEqual([...pass, ...pass, 10]);
    expect(d.status(1000 + 3 * 20)).toEqual({ mode: 'sweep', x: 10.75, direction: 'up', sweepsDone: 0 });
    expect(d.status(1000 + 13 * 20)).toEqual({ mode: 'sweep', x: 10.75, direction: 'down', sweepsDone: 1 });
    expect(d.status(1000 + 16 * 20)).toEqual({ mode: 'hold', x: 10, direction: null, sweepsDone: 2 });
    expect(d.nextChangeAfter(1000 + 16 * 20)).toBe(Infinity);
  });

  it('lands exactly on `to` when the step does not divide the span, and sweeps downward when to < from', () => {
    const d = new ScanDrive(range, 0);
    d.command({ op: 'sweep', from: 1, to: 0, step: 0.3, dwell: 5, sweeps: 1 }, 0);
    expect(staircase(d, 0, 5, 9)).toEqual([1, 0.7, 0.4, 0.1, 0, 0.3, 0.6, 0.9, 1]);
    expect(d.status(2).direction).toBe('down');
    expect(d.status(22).direction).toBe('up');
  });

  it('takes 800 steps per pass for 40 V in 0.05 V steps (no float creep)', () => {
    const d = new ScanDrive(range, 0);
    d.command({ op: 'sweep', from: 0, to: 40, step: 0.05, dwell: 1, sweeps: 1 }, 0);
    expect(d.voltageAt(799.5)).toBeCloseTo(39.95, 12);
    expect(d.voltageAt(800.5)).toBe(40);
    expect(d.voltageAt(801.5)).toBeCloseTo(39.95, 12);
    expect(d.status(1600).mode).toBe('hold');
  });

  it('reports the next step time so a bin can be cut into constant-voltage pieces', () => {
    const d = new ScanDrive(range, 0);
    d.command({ op: 'sweep', from: 0, to: 1, step: 0.5, dwell: 0.3, sweeps: 1 }, 0);
    let t = 0;
    const times: number[] = [];
    while (t < 1.2) {
      t = d.nextChangeAfter(t);
      times.push(t);
    }
    expect(times.map((x) => Math.round(x * 10) / 10)).toEqual([0.3, 0.6, 0.9, 1.2]);
    expect(d.voltageAt(0.6)).toBe(1);
  });

  it('holds at x, and stop freezes a running sweep where it is', () => {
    const d = new ScanDrive(range, 0);
    expect(d.command({ op: 'hold', x: 17.5 }, 0)).toEqual({ ok: true });
    expect(d.voltageAt(1e6)).toBe(17.5);
    d.command({ op: 'sweep', from: 0, to: 10, step: 1, dwell: 10, sweeps: 5 }, 100);
    expect(d.command({ op: 'stop' }, 100 + 35)).toEqual({ ok: true });
    expect(d.voltageAt(1e6)).toBe(3);
    expect(d.status(1e6)).toEqual({ mode: 'hold', x: 3, direction: null, sweepsDone: 0 });
  });

  it('refuses commands outside the scan range and keeps what it was doing', () => {
    const d = new ScanDrive(range, 0);
    d.command({ op: 'hold', x: 5 }, 0);
    const refusals = [
      d.command({ op: 'hold', x: 40.01 }, 0),
      d.command({ op: 'hold', x: -1 }, 0),
      d.command({ op: 'sweep', from: 0, to: 41, step: 1, dwell: 10, sweeps: 1 }, 0),
      d.command({ op: 'sweep', from: -5, to: 10, step: 1, dwell: 10, sweeps: 1 }, 0),
      d.command({ op: 'hold', x: Number.NaN }, 0),
    ];
    for (const r of refusals) expect(r.ok).toBe(false);
    expect(refusals[0]).toEqual({ ok: false, error: 'x = 40.01 V is outside the scan range 0…40 V' });
    expect(refusals[2]).toEqual({ ok: false, error: 'to = 41 V is outside the scan range 0…40 V' });
    expect(d.voltageAt(10)).toBe(5);
    // Inside the range but malformed.
    expect(d.command({ op: 'sweep', from: 3, to: 3, step: 1, dwell: 10, sweeps: 1 }, 0).ok).toBe(false);
    expect(d.command({ op: 'sweep', from: 0, to: 3, step: 0, dwell: 10, sweeps: 1 }, 0).ok).toBe(false);
    expect(d.command({ op: 'sweep', from: 0, to: 3, step: 1, dwell: 10, sweeps: 1.5 }, 0).ok).toBe(false);
    // The edges themselves are inside.
    expect(d.command({ op: 'sweep', from: 0, to: 40, step: 1, dwell: 10, sweeps: 1 }, 0)).toEqual({ ok: true });
  });
});
