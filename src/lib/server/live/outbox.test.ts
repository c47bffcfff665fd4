import { describe, expect, it } from 'vitest';
import type { CountsMessage } from '../../live-messages.ts';
import { Outbox, type PreparedFrame, type Queued, type Sink } from './outbox.ts';
import { textFrames } from './ws-frame.ts';

function fakeSink(buffered = 0, open = true) {
  const log: string[] = [];
  const sink: Sink = {
    bufferedAmount: buffered,
    send: (data) => log.push(`send ${typeof data === 'string' ? data : data.toString()}`),
    cork: () => log.push('cork'),
    uncork: () => log.push('uncork'),
    writeFramed: (wire) => open && log.push(`framed ${wire.length}`) > 0,
  };
  return { sink, log };
}

const prepared = (items: Queued[]): PreparedFrame => ({ items, wire: textFrames(items.map((q) => q.data as Buffer)) });

const item = (gateway: string, t0: number): Queued => {
  const msg: CountsMessage = { type: 'counts', bench: 'b', gateway, t0, dt: 10, ch: { a: [1] } };
  const data = Buffer.from(JSON.stringify(msg));
  return { msg, data, bytes: data.length };
};

describe('Outbox', () => {
  it('writes a frame at once as the prepared bytes, in one write', () => {
    const { sink, log } = fakeSink();
    const frame = prepared([item('g1', 0), item('g2', 0)]);
    new Outbox(sink, 'b').pushFrame(frame);
    expect(log).toEqual([`framed ${frame.wire.length}`]);
  });

  it('falls back to one corked write of the shared buffers when the prepared bytes cannot go', () => {
    const { sink, log } = fakeSink(0, false);
    const items = [item('g1', 0), item('g2', 0)];
    new Outbox(sink, 'b').pushFrame(prepared(items));
    expect(log).toEqual(['cork', `send ${items[0]!.data}`, `send ${items[1]!.data}`, 'uncork']);
  });

  it('holds a frame while the socket buffer is full, merging what waits', () => {
    const { sink, log } = fakeSink(1024 * 1024);
    const box = new Outbox(sink, 'b');
    box.pushFrame(prepared([item('g1', 0)]));
    box.pushFrame(prepared([item('g1', 10)]));
    expect(log).toEqual([]);
    expect(box.size).toBe(2);
    box.close();
  });
});
