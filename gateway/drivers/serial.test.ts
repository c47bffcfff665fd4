import { spawn, spawnSync } from 'node:child_process';
import { once } from 'node:events';
import { createInterface } from 'node:readline';
import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import type { Bins, CounterSink } from '../counter.ts';
import { SerialCounter } from './serial.ts';

function collect(): { sink: CounterSink; bins: Bins[]; warnings: string[]; ended: Promise<Error | undefined> } {
  const bins: Bins[] = [];
  const warnings: string[] = [];
  let end: (err?: Error) => void = () => undefined;
  const ended = new Promise<Error | undefined>((r) => (end = r));
  return { bins, warnings, ended, sink: { bins: (b) => (bins.push(b), Promise.resolve()), info: () => undefined, warn: (m) => warnings.push(m), end } };
}

const lines = (from: number, n: number): string => Array.from({ length: n }, (_, i) => `${from + 10 * i} ${i} ${100 + i} ${i % 3}\n`).join('');
const flat = (bins: Bins[], key: string): number[] => bins.flatMap((b) => b.ch[key] ?? []);

// A microcontroller on a pseudo-terminal: python3 opens the pair, puts the device side in raw
// mode as `stty raw -echo` would, prints its path, then copies its stdin to the line until EOF.
const PTY = `
import os, pty, sys, tty
master, slave = pty.openpty()
tty.setraw(slave)
print(os.ttyname(slave), flush=True)
while True:
    line = sys.stdin.buffer.readline()
    if not line:
        break
    os.write(master, line)
os.close(master)
`;
const hasPython = spawnSync('python3', ['-c', 'import pty'], { stdio: 'ignore' }).status === 0;

describe('serial driver', () => {
  it.runIf(hasPython)('reads a counter over a pseudo-terminal: header, bins, bad lines reported, unplugging survived', async () => {
    const device = spawn('python3', ['-c', PTY], { stdio: ['pipe', 'pipe', 'inherit'] });
    try {
      const [ptyPath] = (await once(createInterface({ input: device.stdout }), 'line')) as [string];
      const c = collect();
      const counter = new SerialCounter({ device: ptyPath, batchMs: 50, reopenMs: 60_000, warnEveryMs: 0 });
      const started = counter.start(c.sink);
      device.stdin.write('# counter firmware 1.2\nHELLO v=1 dt=10 cols=t,a,b,cc\n');
      expect(await started).toEqual({ channels: ['a', 'b'] });
      device.stdin.write(lines(5000, 12) + 'garbage here\n' + lines(5120, 13));
      await expect.poll(() => flat(c.bins, 'a').length, { timeout: 5000 }).toBe(25);
      expect(flat(c.bins, 'a')).toEqual([...Array(12).keys(), ...Array(13).keys()]);
      expect(flat(c.bins, 'b')).toEqual([...Array(12).keys(), ...Array(13).keys()].map((i) => 100 + i));
      // One anchor: the bins are contiguous on the wall-clock grid.
      const t0s = c.bins.flatMap((b) => b.ch['a']!.map((_, j) => b.t0 + j * b.dt));
      expect(t0s.every((t, i) => t === t0s[0]! + 10 * i && t % 10 === 0)).toBe(true);
      expect(c.warnings.some((w) => w.includes('bad serial line') && w.includes('expected 4 fields'))).toBe(true);
      // The device goes away: the driver says so and waits to reopen it, rather than ending.
      device.stdin.end();
      await expect.poll(() => c.warnings.some((w) => w.includes('reopening')), { timeout: 5000 }).toBe(true);
      await counter.stop();
    } finally {
      device.kill();
    }
  });

  it('reads any stream and ends with it, delivering a half-full batch', async () => {
    const stream = new PassThrough();
    const c = collect();
    const counter = new SerialCounter({ stream, batchMs: 1000 });
    const started = counter.start(c.sink);
    stream.write('HELLO v=1 dt=10 cols=t,a,b,cc\r\n' + lines(0, 3));
    expect(await started).toEqual({ channels: ['a', 'b'] });
    stream.end();
    expect(await c.ended).toBeUndefined();
    expect(c.bins).toHaveLength(1);
    expect(c.bins[0]).toMatchObject({ dt: 10, ch: { a: [0, 1, 2], b: [100, 101, 102] }, cc: [0, 1, 2] });
    await counter.stop();
  });

  it('says how far ahead a backlog read at once puts the device clock, without calling its lines bad', async () => {
    const stream = new PassThrough();
    const c = collect();
    const T = 1_800_000_000_000;
    const counter = new SerialCounter({ stream, batchMs: 1000, now: () => T });
    const started = counter.start(c.sink);
    // 3 s of bins that the counter held back, all read in the same instant.
    stream.write('HELLO v=1 dt=10 cols=t,a,b,cc\n' + lines(0, 300));
    await started;
    await expect.poll(() => c.warnings.length).toBeGreaterThan(0);
    expect(c.warnings[0]).toMatch(/^device clock runs \d+ ms ahead of this gateway's clock: its bins are stored that far in the future/);
    expect(c.warnings.some((w) => w.includes('bad serial line'))).toBe(false);
    await counter.stop();
  });

  it('fails to start when the stream ends before any header', async () => {
    const stream = new PassThrough();
    const counter = new SerialCounter({ stream });
    const started = counter.start(collect().sink);
    stream.end('1 2 3\n');
    await expect(started).rejects.toThrow(/before the counter sent its HELLO line/);
    await counter.stop();
  });
});
