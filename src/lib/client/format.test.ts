import { describe, expect, it } from 'vitest';
import type { BenchFigures, ChannelFigures } from '../bench-figures.ts';
import { formatClock, formatDateTime, formatPastMoment, formatValueErr, parseLocalInput, PLUS_MINUS, snapshotLines } from './format.ts';

describe('local time fields', () => {
  it('shows a time as YYYY-MM-DD HH:MM, 24 h, and reads it back', () => {
    const ms = new Date(2026, 11, 1, 21, 5).getTime();
    expect(formatDateTime(ms)).toBe('2026-12-01 21:05');
    expect(parseLocalInput('2026-12-01 21:05')).toBe(ms);
    expect(parseLocalInput(' 2026-12-01T21:05:30 ')).toBe(ms + 30_000);
  });

  it('gives a past moment of the same day as its time of day, an older one with its date', () => {
    const now = new Date(2026, 11, 1, 21, 5).getTime();
    expect(formatPastMoment(new Date(2026, 11, 1, 0, 0, 7).getTime(), now)).toBe(formatClock(new Date(2026, 11, 1, 0, 0, 7).getTime()));
    expect(formatPastMoment(new Date(2026, 10, 30, 23, 59, 7).getTime(), now)).toBe('2026-11-30 23:59');
  });

  it.each(['2026-02-30 10:00', '2026-12-01 24:00', '2026-12-01 10:60', '12/01/2026 09:20 PM', '2026-12-01', ''])('refuses %j', (text) => {
    expect(parseLocalInput(text)).toBeNull();
  });
});

describe('a note’s snapshot', () => {
  const channel = (role: ChannelFigures['role'], label: string, rateRaw: number, q: number | null): ChannelFigures => ({
    channel: `gw/${label}`,
    role,
    label,
    rateRaw,
    rateCorrected: null,
    deadTimeLoss: null,
    mandelQ: q === null ? null : { value: q, err: 0.051 },
    warning: null,
  });
  const base: BenchFigures = {
    benchId: 'mz',
    at: 0,
    windowMs: 10_000,
    channels: [channel('out_a', 'Output A', 23_798.4, -0.0377), channel('out_b', 'Output B', 13_290.4, -0.1132), channel('herald', 'Herald', 200_212, -0.03)],
    visibility: { value: 0.96990, err: 0.00051, source: 'sweep', net: false },
    holding: true,
    phase: { value: 1.2085, err: 0.0054, driftRadPerS: null },
    contrast: 0.34,
    g2: null,
    coincidenceWindowNs: 2,
    alpha: { value: 0.01368, err: 0.00093 },
    shotNoise: { measuredRad: 0.04619, limitRad: 0.05195, ratio: 0.889, ratioErr: 0.020, dB: -1.02, binMs: 10, bins: 1000, visibilityLimitRad: 0.0536 },
  };

  it('shows α with its error on a heralded bench, the outputs’ Mandel Q and the phase noise against shot noise', () => {
    // Lines break between figures only: inside one the spaces do not break.
    const lines = snapshotLines(base);
    expect(lines[0]).toContain('φ\u00a01.2085');
    expect(lines.map((l) => l.replaceAll('\u00a0', ' '))).toEqual([
      'Output A 23.80 kc/s · Output B 13.29 kc/s · V 0.96990 ± 0.00051 · φ 1.2085 ± 0.0054 rad',
      'heralded α 0.01368 ± 0.00093 · Mandel Q: Output A −0.038 ± 0.051, Output B −0.113 ± 0.051',
      'phase noise 0.889 ± 0.020 × shot noise: 46.19 against 51.95 mrad per 10 ms bin over 10 s',
    ]);
  });

  it('shows g²(0) and its window on a laser bench, and says why φ and the phase noise are missing while the drive moves', () => {
    const lines = snapshotLines({ ...base, alpha: null, g2: { value: 0.989, err: 0.058, accidentals: 298 }, holding: false, phase: null, shotNoise: null }).map((l) => l.replaceAll('\u00a0', ' '));
    expect(lines[0]).toMatch(/V 0\.96990.*· drive moving$/);
    expect(lines).toHaveLength(2);
    expect(lines[1]).toBe('g²(0) 0.989 ± 0.058 (window 2.0 ns) · Mandel Q: Output A −0.038 ± 0.051, Output B −0.113 ± 0.051');
  });

  it('formats an older snapshot without the later fields, and leaves out an empty line', () => {
    const old = { ...base, channels: base.channels.map((c) => ({ ...c, mandelQ: null })), alpha: null, shotNoise: null, holding: undefined, coincidenceWindowNs: undefined };
    expect(snapshotLines(old).map((l) => l.replaceAll('\u00a0', ' '))).toEqual(['Output A 23.80 kc/s · Output B 13.29 kc/s · V 0.96990 ± 0.00051 · φ 1.2085 ± 0.0054 rad']);
    // Phase noise from before it was pooled over the hold: one second, its length unsaid.
    const oneSecond = { ...base, shotNoise: { measuredRad: 0.04619, limitRad: 0.05195, ratio: 0.889, ratioErr: 0.063, dB: -1.02, binMs: 10, visibilityLimitRad: 0.0536 } };
    expect(snapshotLines(oneSecond)[2]?.replaceAll('\u00a0', ' ')).toBe('phase noise 0.889 ± 0.063 × shot noise: 46.19 against 51.95 mrad per 10 ms bin');
  });
});

describe('formatValueErr', () => {
  it('writes a negative value with a true minus sign, as formatNumber does', () => {
    expect(formatValueErr({ value: -61.73, err: 2.2 })).toBe(`−61.7${PLUS_MINUS}2.2`);
  });
});
