import { appendFile, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { DiskQueue } from './queue.ts';

let dir: string;
beforeEach(async () => {
  dir = await mkdtemp(path.join(os.tmpdir(), 'fw-queue-'));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

const payload = (i: number): string => JSON.stringify({ seq: i, pad: 'x'.repeat(i % 7) });

async function fill(q: DiskQueue, from: number, to: number): Promise<void> {
  await Promise.all(Array.from({ length: to - from }, (_, k) => q.append(payload(from + k))));
}

describe('DiskQueue', () => {
  it('hands records back in order and numbers them from 0', async () => {
    const q = await DiskQueue.open(dir);
    await fill(q, 0, 250);
    const first = await q.read(0, 100);
    const second = await q.read(100, 1000);
    expect(first.map((r) => r.index)).toEqual([...Array(100).keys()]);
    expect(second.map((r) => r.payload)).toEqual(Array.from({ length: 150 }, (_, k) => payload(100 + k)));
    await q.close();
  });

  it('resumes after a restart at the first unacknowledged record', async () => {
    const q = await DiskQueue.open(dir);
    await fill(q, 0, 20);
    for (let i = 0; i < 10; i++) q.ack(i);
    // Out of order: 12 is acknowledged but 10 and 11 are not, so the cursor stays at 10.
    q.ack(12);
    await q.close();
    const again = await DiskQueue.open(dir);
    expect(again.first).toBe(10);
    expect(again.next).toBe(20);
    const rest = await again.read(again.first, 100);
    expect(rest.map((r) => r.index)).toEqual([...Array(10).keys()].map((k) => 10 + k));
    await again.append(payload(20));
    expect((await again.read(20, 1))[0]).toEqual({ index: 20, payload: payload(20) });
    await again.close();
  });

  it('ignores a partial last line left by a crash and keeps appending after it', async () => {
    const q = await DiskQueue.open(dir);
    await fill(q, 0, 5);
    await q.close();
    const [segment] = (await readdir(dir)).filter((f) => f.endsWith('.seg'));
    await appendFile(path.join(dir, segment!), '1234abcd {"seq":5,"pa');
    const again = await DiskQueue.open(dir);
    expect(again.next).toBe(5);
    await again.append(payload(5));
    expect((await again.read(0, 100)).map((r) => r.payload)).toEqual([0, 1, 2, 3, 4, 5].map(payload));
    await again.close();
  });

  it('skips and counts a record whose checksum fails, keeping the indices of the others', async () => {
    const losses: number[] = [];
    const q = await DiskQueue.open(dir);
    await fill(q, 0, 3);
    await q.close();
    const file = path.join(dir, (await readdir(dir)).find((f) => f.endsWith('.seg'))!);
    const text = await readFile(file, 'utf8');
    await writeFile(file, text.replace('"seq":1', '"seq":7'));
    const again = await DiskQueue.open(dir, { onLoss: (n) => losses.push(n) });
    const records = await again.read(0, 10);
    expect(records.map((r) => r.index)).toEqual([0, 2]);
    expect(losses).toEqual([1]);
    again.ack(0);
    again.ack(2);
    expect(again.first).toBe(3);
    await again.close();
  });

  it('refuses a second user of the same directory while the first is open', async () => {
    const q = await DiskQueue.open(dir);
    await expect(DiskQueue.open(dir)).rejects.toThrow(/in use by process/);
    await q.close();
    // A lock left by a process that is gone (here: pid 2^22 + 1, above Linux's pid_max) is taken over.
    await writeFile(path.join(dir, 'lock'), `${2 ** 22 + 1}\n`);
    await (await DiskQueue.open(dir)).close();
  });

  it('rolls segments over and deletes the ones fully acknowledged', async () => {
    const q = await DiskQueue.open(dir, { segmentBytes: 200, maxBytes: 1e6, cursorEveryMs: 1 });
    for (let i = 0; i < 30; i++) await q.append(payload(i));
    expect(q.stats().segments).toBeGreaterThan(3);
    for (let i = 0; i < 25; i++) q.ack(i);
    await q.close();
    const again = await DiskQueue.open(dir);
    expect(again.first).toBe(25);
    expect(again.stats().segments).toBeLessThanOrEqual(2);
    expect((await again.read(0, 100)).map((r) => r.index)).toEqual([25, 26, 27, 28, 29]);
    await again.close();
  });

  it('drops the oldest segment when full, counts the loss and resumes after it', async () => {
    const losses: number[] = [];
    const q = await DiskQueue.open(dir, { segmentBytes: 300, maxBytes: 2400, onLoss: (n) => losses.push(n) });
    for (let i = 0; i < 200; i++) await q.append(payload(i));
    const stats = q.stats();
    expect(stats.bytes).toBeLessThanOrEqual(2400);
    expect(stats.lost).toBe(stats.cursor);
    expect(losses.reduce((a, b) => a + b, 0)).toBe(stats.cursor);
    const kept = await q.read(0, 1000);
    expect(kept[0]!.index).toBe(stats.cursor);
    expect(kept.at(-1)!.index).toBe(199);
    expect(kept.map((r) => r.index)).toEqual(Array.from({ length: 200 - stats.cursor }, (_, k) => stats.cursor + k));
    // The bound holds on disk too: dropped segments' files are gone, not only forgotten.
    const files = (await readdir(dir)).filter((f) => f.endsWith('.seg'));
    expect(files).toHaveLength(stats.segments);
    let onDisk = 0;
    for (const f of files) onDisk += (await readFile(path.join(dir, f))).length;
    expect(onDisk).toBe(stats.bytes);
    await q.close();
  });
});
