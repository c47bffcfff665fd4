// The drive command path shared by the Drive card and the drive strip: where it posts, and what the
// operator is told: the gateway's own answer (accepted, refused with its reason, or none yet), a
// gateway offline, or the server's refusal (an observer's 403).
import { afterEach, describe, expect, it, vi } from 'vitest';
import type { AnswerSource, GatewayAnswer } from './command-answers.ts';
import { sendDriveCommand } from './drive-command.ts';

function answer(status: number, body: unknown): Response {
  return new Response(JSON.stringify(body), { status, headers: { 'content-type': 'application/json' } });
}

/** Answers as a gateway would over the live socket: `byId` per command id, nothing for the rest. */
function gatewayAnswers(byId: Record<string, GatewayAnswer>): { source: AnswerSource; asked: string[]; closed: () => number } {
  const asked: string[] = [];
  let closed = 0;
  return {
    asked,
    closed: () => closed,
    source: () => ({
      answer: (id) => (asked.push(id), Promise.resolve(Object.hasOwn(byId, id) ? byId[id]! : null)),
      close: () => void (closed += 1),
    }),
  };
}

afterEach(() => vi.unstubAllGlobals());

describe('sendDriveCommand', () => {
  it("posts the command to the bench and reports the gateway's acceptance", async () => {
    const fetch = vi.fn(async () => answer(202, { id: 'c1', gateway: 'gw-633', gatewayOnline: true }));
    vi.stubGlobal('fetch', fetch);
    const gw = gatewayAnswers({ c1: { ok: true } });
    expect(await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop', gw.source)).toEqual({ ok: true, text: 'Stop: accepted by gw-633.' });
    expect(fetch).toHaveBeenCalledTimes(1);
    const [url, init] = fetch.mock.calls[0] as unknown as [string, RequestInit];
    expect(url).toBe('/api/v1/benches/mz-633/commands');
    expect(init.method).toBe('POST');
    expect(JSON.parse(String(init.body))).toEqual({ op: 'stop' });
    expect(gw.asked).toEqual(['c1']);
    expect(gw.closed()).toBe(1);
  });

  it("says when the gateway refuses, with its reason, and when it has not answered", async () => {
    vi.stubGlobal('fetch', async () => answer(202, { id: 'c3', gateway: 'gw-780', gatewayOnline: true }));
    const refused = await sendDriveCommand('mz-780', { op: 'sweep', from: 0, to: 10, step: 0.1, dwell: 10, sweeps: 1 }, 'Sweep', gatewayAnswers({ c3: { ok: false, error: 'this gateway has no scan drive' } }).source);
    expect(refused).toEqual({ ok: false, text: 'Sweep refused by gw-780: this gateway has no scan drive.' });
    const silent = await sendDriveCommand('mz-780', { op: 'hold', x: 5 }, 'Hold at 5 V', gatewayAnswers({}).source);
    expect(silent).toEqual({ ok: true, text: 'Hold at 5 V: sent to gw-780, which has not answered yet.' });
  });

  it('says a command to an offline gateway was not delivered', async () => {
    vi.stubGlobal('fetch', async () => answer(202, { id: 'c2', gateway: 'gw-633', gatewayOnline: false }));
    const gw = gatewayAnswers({});
    const out = await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop', gw.source);
    expect(out.ok).toBe(false);
    expect(out.text).toBe('Stop not delivered: gateway gw-633 is offline. Send it again once it is back.');
    expect(gw.asked).toEqual([]);
    expect(gw.closed()).toBe(1);
  });

  it("passes on the server's refusal and never throws", async () => {
    const gw = gatewayAnswers({});
    vi.stubGlobal('fetch', async () => answer(403, { error: 'needs the operator role' }));
    expect(await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop', gw.source)).toEqual({ ok: false, text: 'Stop refused: needs the operator role' });
    vi.stubGlobal('fetch', async () => {
      throw new TypeError('network down');
    });
    expect(await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop', gw.source)).toEqual({ ok: false, text: 'Stop refused: the server cannot be reached' });
    expect(gw.closed()).toBe(2);
  });
});
