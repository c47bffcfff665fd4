// The HTTP edges scripts and browsers meet before a route's own code: the cross-site check
// (cookie requests from our own origin only, Bearer scripts served whatever their content type).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { HttpClient } from '../helpers/http-client.ts';
import { resetSignInLimits, startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `edge-${tag}`;
let app: RunningApp;
let op: { email: string; password: string; token: string };

const isJson = (res: Response) => expect(res.headers.get('content-type') ?? '').toMatch(/^application\/json/);

beforeAll(async () => {
  app = await startWebApp();
  op = await userWithToken('operator', 'edge-op');
  await createBench({ id: BENCH, name: 'Edges', wavelengthNm: 633 });
  await createGateway(`gw-edge-${tag}`, BENCH);
});
afterAll(async () => app?.close());

describe('cross-site requests', () => {
  const commands = `/api/v1/benches/${BENCH}/commands`;
  const bearerPost = (path: string, body: BodyInit, headers: Record<string, string> = {}) =>
    fetch(new URL(path, app.url), { method: 'POST', headers: { authorization: `Bearer ${op.token}`, ...headers }, body });

  it('serves Bearer posts whatever their content type, with the handler answering the body', async () => {
    // curl -d's default content type, with a valid command: the command is sent.
    const form = await bearerPost(commands, '{"op":"stop"}', { 'content-type': 'application/x-www-form-urlencoded' });
    expect(form.status).toBe(202);
    expect(await form.json()).toEqual({ id: expect.any(String) });
    // No content type and text/plain, with bodies the handler refuses itself.
    const bare = await fetch(new URL(commands, app.url), { method: 'POST', headers: { authorization: `Bearer ${op.token}` }, body: new Uint8Array(Buffer.from('op=stop')) });
    expect(bare.status).toBe(400);
    isJson(bare);
    expect((await bare.json()).error).toMatch(/not valid JSON/);
    const text = await bearerPost(commands, '{"op":"jump"}', { 'content-type': 'text/plain' });
    expect(text.status).toBe(422);
    isJson(text);
    // A multipart upload reaches the import preview, which asks for the CSV itself.
    const fd = new FormData();
    fd.set('file', new Blob(['t_ms,a\n0,1\n'], { type: 'text/csv' }), 'scan.csv');
    const multipart = await bearerPost(`/api/v1/benches/${BENCH}/import/preview`, fd, { origin: 'http://evil.example' });
    expect(multipart.status).toBe(415);
    expect((await multipart.json()).error).toMatch(/CSV itself/);
  });

  it('answers a script without credentials 401, whatever its content type', async () => {
    const res = await fetch(new URL(commands, app.url), { method: 'POST', headers: { 'content-type': 'application/x-www-form-urlencoded' }, body: 'op=stop' });
    expect(res.status).toBe(401);
    isJson(res);
  });

  it('refuses cookie requests from elsewhere: JSON for the API, text for forms', async () => {
    resetSignInLimits();
    const c = new HttpClient(app.url);
    expect((await c.signIn(op.email, op.password)).status).toBe(303);
    const evil = { origin: 'http://evil.example' };
    const form = await c.postForm('/account', { intent: 'token-create', label: 'x' }, evil);
    expect(form.status).toBe(403);
    expect(form.headers.get('content-type')).toMatch(/^text\/plain/);
    for (const type of ['application/json', 'application/x-www-form-urlencoded', 'text/plain']) {
      const res = await c.request(commands, { method: 'POST', headers: { ...evil, 'content-type': type }, body: '{"op":"stop"}' });
      expect(res.status, type).toBe(403);
      expect(JSON.parse(res.text), type).toEqual({ error: expect.stringMatching(/cross-site/) });
    }
    // A fetch that hides its origin is refused too; the same request from our own pages is served.
    const hidden = await fetch(new URL(commands, app.url), { method: 'POST', headers: { cookie: `fw_session=${c.cookies.get('fw_session')}`, 'content-type': 'application/json' }, body: '{"op":"stop"}' });
    expect(hidden.status).toBe(403);
    const own = await c.request(commands, { method: 'POST', headers: { 'content-type': 'application/json' }, body: '{"op":"stop"}' });
    expect(own.status).toBe(202);
  });

  it('refuses a sign-in form posted from another site', async () => {
    resetSignInLimits();
    const res = await new HttpClient(app.url).postForm('/signin', { email: op.email, password: op.password }, { origin: 'http://evil.example' });
    expect(res.status).toBe(403);
    expect(res.headers.get('set-cookie')).toBeNull();
  });
});
