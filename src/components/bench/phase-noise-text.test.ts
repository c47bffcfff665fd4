import { describe, expect, it } from 'vitest';
import { decimalsForError, phaseNoiseText } from './phase-noise-text.ts';

describe('decimalsForError (Particle Data Group rounding)', () => {
  it('keeps two digits of an uncertainty starting 100–354, one of 355–949, and rounds 950–999 up', () => {
    expect(decimalsForError(0.0032)).toBe(4); // 0.0032
    expect(decimalsForError(9.0)).toBe(0); // 9
    expect(decimalsForError(0.09)).toBe(2); // 0.09
    expect(decimalsForError(0.6)).toBe(1); // 0.6
    expect(decimalsForError(0.098)).toBe(2); // 0.10
    expect(decimalsForError(12)).toBe(0); // 12
    expect(decimalsForError(0)).toBe(2);
  });
});

describe('phaseNoiseText', () => {
  // The reviewed reading: 128.60 mrad per 10 ms bin against a shot-noise limit of 99.94 mrad, at
  // V = 0.78 at mid-fringe, read over one second of 100 bins about its straight line (ratio error
  // ratio/√(2·98) ≈ 7 %).
  const measured = 0.1286;
  const limit = 0.09994;
  const v = 0.78;
  const ratio = measured / limit;
  const sn = { measuredRad: measured, limitRad: limit, ratio, ratioErr: ratio / Math.sqrt(2 * 98), dB: 20 * Math.log10(ratio), binMs: 10, bins: 100, visibilityLimitRad: limit / v };
  const t = phaseNoiseText(sn, v);

  it('rounds every figure to what the 7 % uncertainty supports', () => {
    expect(t.value).toBe('1.29');
    expect(t.unit).toBe('±\u00a00.09 × shot noise');
    expect(t.lines[0]).toBe('129\u00a0±\u00a09\u00a0mrad per\u00a010\u00a0ms\u00a0bin');
    expect(t.lines[1]).toBe('shot noise 100\u00a0mrad');
    expect(t.lines[2]).toBe('floor 128 at V\u00a00.78');
  });

  it('splits the excess over shot noise into what alignment can gain and the noise above the floor', () => {
    // 20·log₁₀(1/0.78) = 2.16 dB; 20·log₁₀(1.2868) − 2.16 = 0.03 dB, ± (20/ln 10)·7.1 % = 0.6 dB:
    // the bench is at its floor for this V, and only alignment can make it quieter.
    expect(t.lines[3]).toBe('alignment can gain 2.2\u00a0dB');
    expect(t.lines[4]).toBe('noise above floor 0.0\u00a0±\u00a00.6\u00a0dB');
  });

  it('says how long the noise was read over, which sets its ±', () => {
    expect(t.lines[5]).toBe('over 1\u00a0s, drift taken out');
    // Ten seconds of a hold: ±2.3 %, a third of one second's.
    const ten = phaseNoiseText({ ...sn, ratioErr: ratio / Math.sqrt(2 * 980), bins: 1000 }, v);
    expect(ten.unit).toBe('±\u00a00.029 × shot noise');
    expect(ten.lines[5]).toBe('over 10\u00a0s, drift taken out');
  });

  it('shows the floor at the operating point, and the V it was read with', () => {
    // Off mid-fringe (D = V/2) the floor at V = 0.78 is √((1 − D²)/(V² − D²))/√N = 1.063/(V√N):
    // alignment can gain 0.5 dB more (2.16 + 0.53 dB), and the noise reads that much nearer its floor.
    const off = Math.sqrt((1 - 0.39 ** 2) / (0.78 ** 2 - 0.39 ** 2)) * limit;
    const t2 = phaseNoiseText({ ...sn, visibilityLimitRad: off }, v);
    expect(t2.lines[2]).toBe('floor 136 at V\u00a00.78');
    expect(t2.lines[3]).toBe('alignment can gain 2.7\u00a0dB');
    expect(t2.lines[4]).toBe('noise above floor −0.5\u00a0±\u00a00.6\u00a0dB');
  });

  it('says where the floor counts the dark counts, and splits their cost from what alignment can gain', () => {
    // Darks raising the floor by √(N/S) = 1.08 at mid-fringe (the 1550 nm demo bench: 9000 signal
    // and 1500 dark counts a second, see phaseFloor's tests): 20·log₁₀(1.080) = 0.67 dB.
    const dark = Math.sqrt(10_500 / 9000);
    const t3 = phaseNoiseText({ ...sn, visibilityLimitRad: (limit / v) * dark, darkFreeLimitRad: limit / v }, v);
    expect(t3.lines[2]).toBe('floor 138 at V\u00a00.78 with darks');
    expect(t3.lines[3]).toBe('alignment can gain 2.2\u00a0dB');
    expect(t3.lines[4]).toBe('darks cost 0.7\u00a0dB');
    expect(t3.lines[5]).toBe('noise above floor −0.6\u00a0±\u00a00.6\u00a0dB');
  });

  it('writes a negative dB with the minus sign', () => {
    const below = phaseNoiseText({ ...sn, measuredRad: 0.124, ratio: 0.124 / limit, ratioErr: 0.124 / limit / Math.sqrt(196), dB: 20 * Math.log10(0.124 / limit) }, v);
    expect(below.lines[4]).toBe('noise above floor −0.3\u00a0±\u00a00.6\u00a0dB');
  });

  it('gives the shot-noise limit alone for a snapshot without the floor', () => {
    const old = phaseNoiseText({ measuredRad: measured, limitRad: limit, ratio, dB: 20 * Math.log10(ratio) }, v);
    expect(old).toEqual({ value: '1.29', unit: '× shot noise', lines: ['128.6\u00a0mrad', 'shot-noise limit 99.9\u00a0mrad'] });
  });
});
