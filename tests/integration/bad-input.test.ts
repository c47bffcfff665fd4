// Bad input at the web edge gets a clear 4xx and changes nothing, never a 500: dates past what a
// Date holds, ids past what the database holds, NUL characters, oversized bodies, mangled cookies
// and Origin headers; and the import's pseudo-gateways stay out of the live bench's way.
import { eq, like } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getDb } from '../../src/lib/server/db/index.ts';
import { channels, runs } from '../../src/lib/server/db/schema.ts';
import { benchChannels } from '../../src/lib/server/benches.ts';
import { driveGateway } from '../../src/lib/server/commands/dispatch.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { HttpClient } from '../helpers/http-client.ts';
import { resetSignInLimits, startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `bad-${tag}`;
let app: RunningApp;
let op: string;
let admin: string;

const api = (token: string, path: string, init: RequestInit = {}) =>
  fetch(new URL(path, app.url), { ...init, headers: { authorization: `Bearer ${token}`, ...(init.headers as Record<string, string>) } });

beforeAll(async () => {
  app = await startWebApp();
  op = (await userWithToken('operator', 'bad-op')).token;
  admin = (await userWithToken('admin', 'bad-admin')).token;
  await createBench({ id: BENCH, name: 'Bad input', wavelengthNm: 810 });
});
afterAll(async () => {
  await app.close();
});

describe('times and ids past what can be stored or shown', () => {
  it('refuses an import whose times are past the last date a Date holds, and stores no run', async () => {
    // ECMAScript "Time Values and Time Range": a Date holds ±8.64e15 ms.
    const csv = 't_ms,a\n8700000000000000,5\n8700000000001000,6\n';
    const res = await api(op, `/api/v1/benches/${BENCH}/import?title=Far%20future`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: csv });
    expect(res.status).toBe(422);
    expect(JSON.stringify(await res.json())).toMatch(/past the last representable date/);
    expect(await getDb().select().from(runs).where(eq(runs.benchId, BENCH))).toEqual([]);
  });

  it('answers time parameters past the last date with 422', async () => {
    for (const path of [`sweeps?to=99999999999999999999`, `counts?from=8700000000000000&to=8700000001000000&step=1000`, `export?from=8700000000000000&to=8700000000001000`]) {
      const res = await api(op, `/api/v1/benches/${BENCH}/${path}`);
      expect(res.status, path).toBe(422);
    }
  });

  it('answers times that are neither whole ms nor ISO 8601 with a zone with 422', async () => {
    for (const time of ['-5', '1%202%203', 'March%203', '2026-03-03T14:05:00', '2026-02-30T00:00Z']) {
      for (const path of [`counts?from=${time}&to=2`, `sweeps?from=${time}`, `stability?from=1&to=${time}`, `export?to=${time}`]) {
        const res = await api(op, `/api/v1/benches/${BENCH}/${path}`);
        expect(res.status, path).toBe(422);
        expect(((await res.json()) as { error: string }).error, path).toMatch(/neither whole ms since the epoch nor an ISO 8601 date and time with zone/);
      }
    }
    expect((await api(op, `/api/v1/benches/${BENCH}/counts?from=2026-03-03T14:05:00Z&to=2026-03-03T15:06:00%2B01:00`)).status).toBe(200);
  });

  it('answers record ids past the largest integer with 422', async () => {
    const huge = '99999999999999999999';
    const statuses = [
      (await api(admin, `/api/v1/benches/${BENCH}/alarms/${huge}/ack`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ comment: 'seen' }) })).status,
      (await api(admin, `/api/v1/benches/${BENCH}/alarms/rules/1e30`, { method: 'DELETE', headers: { 'content-type': 'application/json' } })).status,
      (await api(admin, `/api/v1/benches/${BENCH}/export?run=${huge}`)).status,
      (await api(admin, `/api/v1/runs/${huge}`)).status,
    ];
    expect(statuses).toEqual([422, 422, 422, 422]);
  });
});

describe('ids that cannot be a bench\'s or a gateway\'s', () => {
  const bad = ['%00', 'a%00b', 'A', '-x', 'x'.repeat(41)];

  it('answers them on the API with 422 and a JSON reason, never a 500', async () => {
    for (const id of bad) {
      const gets = [`/api/v1/benches/${id}/counts?from=1&to=2`, `/api/v1/benches/${id}/sweeps`, `/api/v1/benches/${id}/figures`, `/api/v1/benches/${id}/stability?from=1&to=2`, `/api/v1/gateways/${id}/health`];
      for (const path of gets) {
        const res = await api(op, path);
        expect(res.status, path).toBe(422);
        expect(((await res.json()) as { error: string }).error, path).toMatch(/id must be 1–40 lower-case letters, digits or hyphens/);
      }
      const post = await api(op, `/api/v1/benches/${id}/commands`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ op: 'stop' }) });
      expect(post.status, id).toBe(422);
    }
    // A well-formed id nobody has stays a 404.
    expect((await api(op, `/api/v1/benches/no-such-${tag}/figures`)).status).toBe(404);
    expect((await api(op, `/api/v1/gateways/no-such-${tag}/health`)).status).toBe(404);
  });

  it('shows the pages\' own not-found answer for them', async () => {
    for (const id of bad) {
      for (const path of [`/benches/${id}`, `/benches/${id}/history`, `/benches/${id}/import`, `/benches/${BENCH}/gateways/${id}`, `/benches/${id}/gateways/${id}`, `/admin/benches/${id}`]) {
        const res = await api(admin, path);
        expect(res.status, path).toBe(404);
      }
    }
    // A well-formed id that names nothing gets the app's not-found page, with its way back.
    for (const path of ['/benches/no-such-bench', '/runs/999999999', `/benches/${BENCH}/gateways/no-such-gw`, '/admin/benches/no-such-bench']) {
      const res = await api(admin, path);
      expect(res.status, path).toBe(404);
      expect(await res.text(), path).toMatch(/Nothing here[\s\S]*Back to the lab overview/);
    }
  });
});

describe('request bodies', () => {
  it('refuses a JSON body that is not UTF-8 with 400 and stores nothing', async () => {
    const bytes = Buffer.concat([Buffer.from('{"title":"night '), Buffer.from([0xc3, 0x28]), Buffer.from('"}')]);
    const res = await api(op, `/api/v1/benches/${BENCH}/runs`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: bytes });
    expect(res.status).toBe(400);
    expect(((await res.json()) as { error: string }).error).toMatch(/UTF-8/);
    expect(await getDb().select().from(runs).where(eq(runs.benchId, BENCH))).toEqual([]);
  });

  it('refuses NUL characters in JSON text with 422 and stores nothing', async () => {
    const res = await api(op, `/api/v1/benches/${BENCH}/runs`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ title: 'night\u0000scan' }) });
    expect(res.status).toBe(422);
    expect(((await res.json()) as { error: string }).error).toMatch(/NUL/);
    expect(await getDb().select().from(runs).where(eq(runs.benchId, BENCH))).toEqual([]);
    const imp = await api(op, `/api/v1/benches/${BENCH}/import?title=a%00b`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: 't_ms,a\n0,1\n10,2\n' });
    expect(imp.status).toBe(422);
  });

  it('refuses a JSON body past 1 MiB with 413, declared or streamed', async () => {
    const big = JSON.stringify({ title: 'x'.repeat(1_100_000) });
    const declared = await api(op, `/api/v1/benches/${BENCH}/runs`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: big });
    expect(declared.status).toBe(413);
    const stream = new ReadableStream<Uint8Array>({
      start(c) {
        for (let i = 0; i < 12; i++) c.enqueue(new TextEncoder().encode('x'.repeat(100_000)));
        c.close();
      },
    });
    const streamed = await api(op, `/api/v1/benches/${BENCH}/runs`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: stream, duplex: 'half' } as RequestInit);
    expect(streamed.status).toBe(413);
  });

  it('answers a sign-in form with a NUL or an oversized body as wrong credentials, not 500', async () => {
    const origin = app.url;
    const nul = await fetch(new URL('/signin', app.url), { method: 'POST', redirect: 'manual', headers: { 'content-type': 'application/x-www-form-urlencoded', origin }, body: 'email=a%00b%40x.example&password=whatever-long' });
    expect(nul.status).toBe(401);
    // The server answers before reading an oversized body, so the client may see the connection
    // closed mid-upload instead of the answer; either way nothing was read into memory and no 500.
    const big = await fetch(new URL('/signin', app.url), { method: 'POST', redirect: 'manual', headers: { 'content-type': 'application/x-www-form-urlencoded', origin }, body: 'email=' + 'a'.repeat(200_000) }).then(
      (r) => r.status,
      () => 'closed',
    );
    expect([401, 'closed']).toContain(big);
  });
});

describe('cookies and origins', () => {
  it('clears a mangled session cookie instead of failing every page', async () => {
    for (const value of ['%zz', '%00', 'not a session id!']) {
      const res = await fetch(new URL('/signin', app.url), { headers: { cookie: `fw_session=${value}` }, redirect: 'manual' });
      expect(res.status, value).toBe(200);
      expect(res.headers.get('set-cookie') ?? '', value).toMatch(/fw_session=;/);
      const apiRes = await fetch(new URL(`/api/v1/benches`, app.url), { headers: { cookie: `fw_session=${value}` } });
      expect(apiRes.status, value).toBe(401);
    }
  });

  it('refuses a cookie-authenticated JSON post whose Origin is no URL with 403', async () => {
    resetSignInLimits();
    const u = await userWithToken('operator', 'bad-origin');
    const c = new HttpClient(app.url);
    expect((await c.signIn(u.email, u.password)).status).toBe(303);
    // Browsers send `Origin: null` from sandboxed frames and file pages.
    const res = await c.request(`/api/v1/benches/${BENCH}/runs`, { method: 'POST', headers: { origin: 'null', 'content-type': 'application/json' }, body: JSON.stringify({ title: 'x' }) });
    expect(res.status).toBe(403);
  });
});

describe('imported runs pseudo-gateways', () => {
  it('reserves the imp- prefix and never drives or takes the default roles from one', async () => {
    await expect(createGateway(`imp-${tag}`, BENCH)).rejects.toThrow(/kept for imported runs/);
    // An import before the live gateway exists: its channels must not take out_a/out_b from the live one.
    const csv = 't_ms,a,b\n0,1,2\n10,3,4\n';
    const res = await api(op, `/api/v1/benches/${BENCH}/import?title=Before%20live`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: csv });
    expect(res.status).toBe(201);
    expect(await driveGateway(BENCH)).toBeNull();
    const live = `gw-${tag}`;
    await createGateway(live, BENCH);
    await getDb().insert(channels).values([
      { gatewayId: live, key: 'x1', benchId: BENCH },
      { gatewayId: live, key: 'x2', benchId: BENCH },
    ]);
    const roles = await benchChannels(BENCH);
    expect(roles.filter((c) => c.role === 'out_a' || c.role === 'out_b').map((c) => [c.gateway, c.key, c.role])).toEqual([
      [live, 'x1', 'out_a'],
      [live, 'x2', 'out_b'],
    ]);
    expect(await driveGateway(BENCH)).toBe(live);
    expect((await getDb().select().from(channels).where(like(channels.gatewayId, 'imp-%'))).length).toBeGreaterThan(0);
  });
});
