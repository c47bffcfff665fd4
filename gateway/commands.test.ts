import { describe, expect, it } from 'vitest';
import { findDemoBench } from '../simulators/demo-benches.ts';
import type { CommandBody } from '../src/lib/contract/wire.ts';
import { CommandHandler } from './commands.ts';
import type { CommandResult, Counter, CounterInfo } from './counter.ts';
import { SimCounter } from './drivers/sim.ts';

const bytes = (o: unknown): Uint8Array => new TextEncoder().encode(JSON.stringify(o));
const scan = { min: 0, max: 75, unit: 'V' };

function driveCounter(): Counter & { done: CommandBody[] } {
  const done: CommandBody[] = [];
  return {
    done,
    start: () => Promise.resolve({ channels: ['a'], scan }),
    stop: () => Promise.resolve(),
    command: (cmd): CommandResult => (done.push(cmd), { ok: true }),
  };
}

describe('CommandHandler', () => {
  it('executes an in-range sweep, hold and stop and acknowledges each', () => {
    const counter = driveCounter();
    const h = new CommandHandler(counter, () => ({ channels: ['a'], scan }));
    expect(h.handle(bytes({ v: 1, id: 'c1', op: 'sweep', from: 0, to: 40, step: 0.05, dwell: 20, sweeps: 4 }))).toEqual({ ack: { v: 1, id: 'c1', ok: true } });
    expect(h.handle(bytes({ v: 1, id: 'c2', op: 'hold', x: 75 }))).toEqual({ ack: { v: 1, id: 'c2', ok: true } });
    expect(h.handle(bytes({ v: 1, id: 'c3', op: 'stop' }))).toEqual({ ack: { v: 1, id: 'c3', ok: true } });
    expect(counter.done.map((c) => c.op)).toEqual(['sweep', 'hold', 'stop']);
  });

  it.each([
    [{ op: 'hold', x: 75.01 }, 'x = 75.01 V is outside the scan range 0…75 V'],
    [{ op: 'hold', x: -1 }, 'x = -1 V is outside'],
    [{ op: 'sweep', from: 0, to: 80, step: 1, dwell: 20, sweeps: 1 }, 'to = 80 V is outside'],
    [{ op: 'sweep', from: -5, to: 10, step: 1, dwell: 20, sweeps: 1 }, 'from = -5 V is outside'],
  ])('refuses %j outside the scan range without touching the drive', (body, error) => {
    const counter = driveCounter();
    const outcome = new CommandHandler(counter, () => ({ channels: ['a'], scan })).handle(bytes({ v: 1, id: 'r', ...body }));
    expect(outcome).toMatchObject({ ack: { v: 1, id: 'r', ok: false } });
    expect('ack' in outcome && outcome.ack.error).toContain(error);
    expect(counter.done).toEqual([]);
  });

  it('refuses invalid bodies with the reason, and ignores what has no id to answer', () => {
    const h = new CommandHandler(driveCounter(), () => ({ channels: ['a'], scan }));
    expect(h.handle(bytes({ v: 1, id: 'b1', op: 'sweep', from: 0, to: 10 }))).toMatchObject({ ack: { id: 'b1', ok: false, error: expect.stringContaining('invalid command') } });
    expect(h.handle(bytes({ v: 1, id: 'b2', op: 'jump' }))).toMatchObject({ ack: { id: 'b2', ok: false } });
    expect(h.handle(bytes({ v: 1, id: 'b3', op: 'sweep', from: 0, to: 10, step: -1, dwell: 20, sweeps: 1 }))).toMatchObject({ ack: { ok: false } });
    expect(h.handle(bytes({ op: 'stop' }))).toHaveProperty('ignored');
    expect(h.handle(bytes({ v: 2, id: 'x', op: 'stop' }))).toHaveProperty('ignored');
    expect(h.handle(new Uint8Array([0xff, 0xfe]))).toHaveProperty('ignored');
  });

  it('answers a redelivered command again without executing it twice', () => {
    const counter = driveCounter();
    const h = new CommandHandler(counter, () => ({ channels: ['a'], scan }));
    const cmd = bytes({ v: 1, id: 'same', op: 'hold', x: 10 });
    expect(h.handle(cmd)).toEqual(h.handle(cmd));
    expect(counter.done).toHaveLength(1);
  });

  it('refuses commands when the driver has no scan drive', () => {
    const info: CounterInfo = { channels: ['a'] };
    const counter: Counter = { start: () => Promise.resolve(info), stop: () => Promise.resolve() };
    const h = new CommandHandler(counter, () => info);
    expect(h.handle(bytes({ v: 1, id: 'n', op: 'hold', x: 1 }))).toEqual({ ack: { v: 1, id: 'n', ok: false, error: 'this gateway has no scan drive' } });
    expect(h.handle(bytes({ v: 1, id: 's', op: 'stop' }))).toEqual({ ack: { v: 1, id: 's', ok: false, error: 'this gateway has no scan drive' } });
  });

  it('drives the simulated piezo: a hold moves the x the batches report', async () => {
    const bench = findDemoBench('mz-810')!;
    let t = 1_796_130_000_000;
    const sim = new SimCounter({ bench, now: () => t, batchMs: 60_000 });
    const x: number[] = [];
    const info = await sim.start({ bins: (b) => (x.push(...(b.x ?? [])), Promise.resolve()), info: () => undefined, warn: () => undefined, end: () => undefined });
    const h = new CommandHandler(sim, () => info);
    t += 100;
    expect(h.handle(bytes({ v: 1, id: 'h', op: 'hold', x: 30 }))).toEqual({ ack: { v: 1, id: 'h', ok: true } });
    expect(h.handle(bytes({ v: 1, id: 'o', op: 'hold', x: 76 }))).toMatchObject({ ack: { ok: false } });
    t += 100;
    await sim.stop();
    expect(x).toEqual([...Array<number>(10).fill(0), ...Array<number>(10).fill(30)]);
  });
});
