import { describe, expect, it } from 'vitest';
import { DEMO_BENCHES, findDemoBench } from './demo-benches.ts';
import { DEMO_PAST, checkPast, minutesBefore, pastStart, recordPast, sweepSpans, type DemoPast, type PastChunk } from './demo-past.ts';

const END = 1_796_200_000_000;
const DT = 10;

function contrast(chunks: PastChunk[], fromMs: number, toMs: number): number {
  let a = 0;
  let b = 0;
  for (const c of chunks) {
    for (let i = 0; i < c.x.length; i++) {
      const t = c.t0 + i * c.dt;
      if (t >= fromMs && t < toMs) {
        a += c.ch['a']![i]!;
        b += c.ch['b']![i]!;
      }
    }
  }
  return (a - b) / (a + b);
}

describe('the demo lab’s recorded past', () => {
  it('scripts demo benches only, with finished runs in time order and one kept', () => {
    for (const past of DEMO_PAST) expect(() => checkPast(past, findDemoBench(past.benchId)!)).not.toThrow();
    expect(new Set(DEMO_PAST.map((p) => p.benchId)).size).toBe(DEMO_PAST.length);
    const runs = DEMO_PAST.flatMap((p) => p.runs);
    expect(runs.length).toBeGreaterThanOrEqual(2);
    expect(runs.filter((r) => r.keep)).toHaveLength(1);
    for (const r of runs) expect(r.notes.length).toBeGreaterThan(0);
  });

  it('lets every sweep finish before the next event', () => {
    for (const past of DEMO_PAST) {
      const spans = sweepSpans(past, END);
      const sweeps = past.events.flatMap((e) => (e.action.op === 'sweep' ? [e.action] : []));
      sweeps.forEach((s, i) => {
        const ms = 2 * Math.ceil(Math.abs(s.to - s.from) / s.step) * s.sweeps * s.dwell;
        expect(ms, `${past.benchId} sweep ${i + 1}`).toBeLessThan(spans[i]!.to - spans[i]!.from);
      });
    }
  });

  it('records every bin of its span once, in the bench’s channels, the same on every run', () => {
    const bench = findDemoBench('mz-1550')!;
    const past = DEMO_PAST.find((p) => p.benchId === bench.id)!;
    const chunks = [...recordPast(bench, past, END, DT)];
    let t = pastStart(past, END);
    for (const c of chunks) {
      expect(c.t0).toBe(t);
      expect(Object.keys(c.ch).sort()).toEqual(bench.channels.map((ch) => ch.key).sort());
      t += c.x.length * DT;
    }
    expect(t).toBe(END);
    expect([...recordPast(bench, past, END, DT)]).toEqual(chunks);
  });

  it('holds at mid-fringe, and keeps the phase across a change that adds no jump', () => {
    const bench = DEMO_BENCHES.find((b) => b.id === 'mz-633')!;
    const past: DemoPast = {
      benchId: bench.id,
      minutes: 3,
      events: [
        { at: 2, action: { op: 'mid-fringe', near: 50 } },
        { at: 1, action: { op: 'optics', driftRadPerS: 0 } },
      ],
      runs: [],
    };
    const chunks = [...recordPast(bench, past, END, DT)];
    const hold = END - minutesBefore(2);
    // At mid-fringe both outputs count alike, but for the detectors' efficiencies (0.60 and 0.62).
    expect(Math.abs(contrast(chunks, hold, hold + 1_000))).toBeLessThan(0.05);
    const change = END - minutesBefore(1);
    expect(Math.abs(contrast(chunks, change - 1_000, change) - contrast(chunks, change, change + 1_000))).toBeLessThan(0.03);
  });
});
