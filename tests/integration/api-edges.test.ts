// The HTTP edges scripts and browsers meet before a route's own code: the cross-site check
// (cookie requests from our own origin only, Bearer scripts served whatever their content type),
// and JSON for every /api answer, wrong methods and unknown paths included.
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
    expect(await form.json()).toMatchObject({ id: expect.any(String) });
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

describe('JSON for every /api answer', () => {
  const call = (path: string, method = 'GET') => fetch(new URL(path, app.url), { method, headers: { authorization: `Bearer ${op.token}` } });

  it('answers a wrong method on a known route 405 with Allow', async () => {
    const cases: [string, string, string][] = [
      ['/api/v1/benches', 'POST', 'GET, HEAD, OPTIONS'],
      [`/api/v1/benches/${BENCH}/commands`, 'GET', 'POST, OPTIONS'],
      [`/api/v1/benches/${BENCH}/commands`, 'DELETE', 'POST, OPTIONS'],
      [`/api/v1/benches/${BENCH}/import`, 'PUT', 'POST, OPTIONS'],
    ];
    for (const [path, method, allow] of cases) {
      const res = await call(path, method);
      expect(res.status, `${method} ${path}`).toBe(405);
      expect(res.headers.get('allow'), `${method} ${path}`).toBe(allow);
      isJson(res);
      expect((await res.json()).error).toMatch(new RegExp(`${method} is not served`));
    }
  });

  it('answers OPTIONS with the route’s methods and no body', async () => {
    const res = await call(`/api/v1/benches/${BENCH}/counts`, 'OPTIONS');
    expect(res.status).toBe(204);
    expect(res.headers.get('allow')).toBe('GET, HEAD, OPTIONS');
    expect(res.headers.get('access-control-allow-origin')).toBeNull();
  });

  it('answers unknown /api paths 404 JSON, and the live path without an upgrade 426 JSON', async () => {
    for (const path of ['/api/nope', '/api/v1/benches/x/y/z', '/api/v2/benches']) {
      const res = await call(path);
      expect(res.status, path).toBe(404);
      isJson(res);
      expect(await res.json()).toEqual({ error: 'not found' });
    }
    const live = await call(`/api/v1/live?bench=${BENCH}`);
    expect(live.status).toBe(426);
    expect(live.headers.get('upgrade')).toBe('websocket');
    isJson(live);
    expect((await live.json()).error).toMatch(/WebSocket/);
    // Pages keep their own answers.
    expect((await call('/no-such-page')).headers.get('content-type')).not.toMatch(/json/);
  });

  it('still serves the methods a route has', async () => {
    expect((await call('/api/v1/benches')).status).toBe(200);
    expect((await call('/api/v1/benches', 'HEAD')).status).toBe(200);
  });
});
