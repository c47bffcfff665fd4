import { describe, expect, it } from 'vitest';
import type { CountsMessage } from '../../live-messages.ts';
import { Outbox, type Queued, type Sink } from './outbox.ts';

function fakeSink(buffered = 0) {
  const log: string[] = [];
  const sink: Sink = {
    bufferedAmount: buffered,
    send: (data) => log.push(`send ${typeof data === 'string' ? data : data.toString()}`),
    cork: () => log.push('cork'),
    uncork: () => log.push('uncork'),
  };
  return { sink, log };
}

const item = (gateway: string, t0: number): Queued => {
  const msg: CountsMessage = { type: 'counts', bench: 'b', gateway, t0, dt: 10, ch: { a: [1] } };
  const data = Buffer.from(JSON.stringify(msg));
  return { msg, data, bytes: data.length };
};

describe('Outbox', () => {
  it('writes a frame at once, in one corked write, sending the shared buffers as they are', () => {
    const { sink, log } = fakeSink();
    const frame = [item('g1', 0), item('g2', 0)];
    new Outbox(sink, 'b').pushFrame(frame);
    expect(log).toEqual(['cork', `send ${frame[0]!.data}`, `send ${frame[1]!.data}`, 'uncork']);
  });

  it('holds a frame while the socket buffer is full, merging what waits', () => {
    const { sink, log } = fakeSink(1024 * 1024);
    const box = new Outbox(sink, 'b');
    box.pushFrame([item('g1', 0)]);
    box.pushFrame([item('g1', 10)]);
    expect(log).toEqual([]);
    expect(box.size).toBe(2);
    box.close();
  });
});
