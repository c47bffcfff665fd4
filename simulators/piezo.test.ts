import { describe, expect, it } from 'vitest';
import type { PiezoModel } from './piezo.ts';
import { Piezo } from './piezo.ts';

const range = { min: 0, max: 100 }; // V
const stack: PiezoModel = { nmPerVolt: 50, hysteresis: 0.12, nonlinearity: 0 };

/** Drives in 0.5 V steps (a sweep's staircase) and records the displacement at each voltage. */
function sweep(p: Piezo, to: number): Map<number, number> {
  const out = new Map<number, number>();
  const s = to > p.voltage ? 0.5 : -0.5;
  for (let v = p.voltage; s > 0 ? v <= to : v >= to; v += s) {
    p.moveTo(v);
    out.set(v, p.displacementNm);
  }
  return out;
}

describe('piezo', () => {
  it('is linear at the calibration without hysteresis or nonlinearity', () => {
    const p = new Piezo({ nmPerVolt: 50, hysteresis: 0, nonlinearity: 0 }, range, 0);
    for (const v of [10, 70, 20, 100, 0]) {
      p.moveTo(v);
      expect(p.displacementNm).toBeCloseTo(50 * v, 9);
      expect(p.slopeNmPerVolt).toBeCloseTo(50, 12);
    }
  });

  it('makes up and down passes differ by the set hysteresis over the full stroke', () => {
    const p = new Piezo(stack, range, 0);
    const up = sweep(p, 100);
    const down = sweep(p, 0);
    // The full-stroke calibration holds: 100 V gives 5000 nm.
    expect(up.get(100)).toBeCloseTo(5000, 9);
    let widest = 0;
    for (const [v, d] of up) {
      // Ascending branch below the descending one everywhere inside the stroke.
      if (v > 0 && v < 100) expect(down.get(v)!).toBeGreaterThan(d);
      widest = Math.max(widest, down.get(v)! - d);
    }
    expect(widest / 5000).toBeCloseTo(0.12, 9);
    // The loop closes.
    expect(down.get(0)).toBeCloseTo(0, 9);
  });

  it('shows about 2% hysteresis for a small excursion', () => {
    const p = new Piezo(stack, range, 40);
    sweep(p, 40 + 100 / 6);
    const down = sweep(p, 40);
    const up = sweep(p, 40 + 100 / 6);
    const mid = 40 + 100 / 12;
    const near = (m: Map<number, number>): number => m.get(Math.round(mid * 2) / 2)!;
    const stroke = up.get(56.5)! - up.get(40)!;
    const fraction = (near(down) - near(up)) / stroke;
    expect(fraction).toBeGreaterThan(0.015);
    expect(fraction).toBeLessThan(0.03);
  });

  it('closes minor loops and wipes them out when driven past their start (Madelung)', () => {
    const direct = new Piezo(stack, range, 0);
    direct.moveTo(80);
    const withLoop = new Piezo(stack, range, 0);
    withLoop.moveTo(50);
    withLoop.moveTo(30);
    withLoop.moveTo(50);
    withLoop.moveTo(80);
    expect(withLoop.displacementNm).toBeCloseTo(direct.displacementNm, 9);
  });

  it('starts slow after a reversal (small-signal slope) and steepens along the branch', () => {
    const p = new Piezo(stack, range, 0);
    p.moveTo(100);
    p.moveTo(99.999);
    const atReversal = p.slopeNmPerVolt;
    p.moveTo(0);
    expect(atReversal).toBeCloseTo(50 * (1 - 2 * 0.12), 2);
    expect(p.slopeNmPerVolt).toBeCloseTo(50 * (1 + 2 * 0.12), 2);
  });

  it('bends the response by the quadratic nonlinearity and keeps the full-stroke calibration', () => {
    const p = new Piezo({ nmPerVolt: 50, hysteresis: 0, nonlinearity: 0.05 }, range, 0);
    p.moveTo(50);
    // d = k·y·(1 − β + β·y/S): at mid-stroke 2500·(1 − 0.05 + 0.025) = 2437.5 nm.
    expect(p.displacementNm).toBeCloseTo(2437.5, 9);
    p.moveTo(100);
    expect(p.displacementNm).toBeCloseTo(5000, 9);
  });
});
