// The drive command path shared by the Drive card and the drive strip: where it posts, and what the
// operator is told when the gateway is offline or the server refuses (an observer's 403).
import { afterEach, describe, expect, it, vi } from 'vitest';
import { sendDriveCommand } from './drive-command.ts';

function answer(status: number, body: unknown): Response {
  return new Response(JSON.stringify(body), { status, headers: { 'content-type': 'application/json' } });
}

afterEach(() => vi.unstubAllGlobals());

describe('sendDriveCommand', () => {
  it('posts the command to the bench and says it was sent', async () => {
    const fetch = vi.fn(async () => answer(202, { id: 'c1', gateway: 'gw-633', gatewayOnline: true }));
    vi.stubGlobal('fetch', fetch);
    expect(await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop')).toEqual({ ok: true, text: 'Stop: sent to the gateway.' });
    expect(fetch).toHaveBeenCalledTimes(1);
    const [url, init] = fetch.mock.calls[0] as unknown as [string, RequestInit];
    expect(url).toBe('/api/v1/benches/mz-633/commands');
    expect(init.method).toBe('POST');
    expect(JSON.parse(String(init.body))).toEqual({ op: 'stop' });
  });

  it('says a command to an offline gateway was not delivered', async () => {
    vi.stubGlobal('fetch', async () => answer(202, { id: 'c2', gateway: 'gw-633', gatewayOnline: false }));
    const out = await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop');
    expect(out.ok).toBe(false);
    expect(out.text).toBe('Stop not delivered: gateway gw-633 is offline. Send it again once it is back.');
  });

  it("passes on the server's refusal and never throws", async () => {
    vi.stubGlobal('fetch', async () => answer(403, { error: 'needs the operator role' }));
    expect(await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop')).toEqual({ ok: false, text: 'Stop refused: needs the operator role' });
    vi.stubGlobal('fetch', async () => {
      throw new TypeError('network down');
    });
    expect(await sendDriveCommand('mz-633', { op: 'stop' }, 'Stop')).toEqual({ ok: false, text: 'Stop refused: the server cannot be reached' });
  });
});
