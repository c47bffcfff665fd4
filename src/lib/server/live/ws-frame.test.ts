// Frames checked with ws's own Receiver (the npm package the hub serves with) as the reference
// parser of RFC 6455 frames.
import type { Writable } from 'node:stream';
import * as ws from 'ws';
import { expect, it } from 'vitest';
import { textFrames } from './ws-frame.ts';

// ws exports its frame parser at run time; its type declarations leave it out.
const { Receiver } = ws as unknown as { Receiver: new (opts: { isServer: boolean }) => Writable };

it('ws reads back every message, at each of the three length encodings', async () => {
  const payloads = [Buffer.from('{"type":"counts"}'), Buffer.from('x'.repeat(300)), Buffer.from('é'.repeat(40_000))];
  const receiver = new Receiver({ isServer: false });
  const got: string[] = [];
  receiver.on('message', (data: Buffer, isBinary: boolean) => {
    expect(isBinary).toBe(false);
    got.push(data.toString());
  });
  await new Promise<void>((resolve, reject) => receiver.write(textFrames(payloads), (err?: Error | null) => (err ? reject(err) : resolve())));
  expect(got).toEqual(payloads.map(String));
});
