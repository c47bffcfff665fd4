import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Bins, CounterSink } from '../counter.ts';
import { ReplayCounter } from './replay.ts';
import type { ReplayDriverOptions } from './replay.ts';

let dir: string;
let file: string;
const T0 = 1_796_130_000_000;
beforeAll(async () => {
  dir = await mkdtemp(path.join(os.tmpdir(), 'fw-replay-'));
  file = path.join(dir, 'export.csv');
  const rows = Array.from({ length: 30 }, (_, i) => `${T0 + 10 * i},${i},${2 * i},${(i * 0.5).toFixed(2)}`);
  await writeFile(file, ['# Fringewise export, bench mz-633', 't_ms,gw-633/a,gw-633/b,x', ...rows, ''].join('\n'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function replay(opts: Omit<ReplayDriverOptions, 'file'>): Promise<{ bins: Bins[]; warnings: string[]; ms: number }> {
  const bins: Bins[] = [];
  const warnings: string[] = [];
  let end: (err?: Error) => void = () => undefined;
  const ended = new Promise<Error | undefined>((r) => (end = r));
  const sink: CounterSink = { bins: (b) => (bins.push(b), Promise.resolve()), info: () => undefined, warn: (m) => warnings.push(m), end };
  const counter = new ReplayCounter({ file, ...opts });
  const start = Date.now();
  expect(await counter.start(sink)).toEqual({ channels: ['a', 'b'] });
  expect(await ended).toBeUndefined();
  await counter.stop();
  return { bins, warnings, ms: Date.now() - start };
}

describe('replay driver', () => {
  it('plays a CSV export back with its recorded times, in batches of the chosen span', async () => {
    const { bins, warnings } = await replay({ speed: 0, time: 'original', batchMs: 100 });
    expect(warnings).toEqual([]);
    expect(bins.map((b) => b.t0)).toEqual([T0, T0 + 100, T0 + 200]);
    expect(bins.flatMap((b) => b.ch['b']!)).toEqual(Array.from({ length: 30 }, (_, i) => 2 * i));
    expect(bins.flatMap((b) => b.x!)).toEqual(Array.from({ length: 30 }, (_, i) => i * 0.5));
  });

  it('restamps from now on the bin grid, keeping the spacing, at real-time pace', async () => {
    const before = Date.now();
    const { bins, ms } = await replay({ speed: 1 });
    const first = bins[0]!.t0;
    expect(first % 10).toBe(0);
    expect(Math.abs(first - before)).toBeLessThan(1000);
    expect(bins.flatMap((b) => b.ch['a']!.map((_, j) => b.t0 + 10 * j))).toEqual(Array.from({ length: 30 }, (_, i) => first + 10 * i));
    // 30 bins of 10 ms take about 300 ms at speed 1.
    expect(ms).toBeGreaterThanOrEqual(250);
  });
});
