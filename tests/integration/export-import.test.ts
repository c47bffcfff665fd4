// Export then import gives identical bins; a corrupt or oversized upload stores nothing and says why.
// Through the real HTTP routes of the built app.
import net from 'node:net';
import { and, eq, like } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getDb } from '../../src/lib/server/db/index.ts';
import { packCounts, unpackCounts } from '../../src/lib/server/db/packed-counts.ts';
import { channels, countBatches, gateways, rollups, runs } from '../../src/lib/server/db/schema.ts';
import { importCounts } from '../../src/lib/server/export/import.ts';
import { loadBenchView } from '../../src/lib/server/bench-view.ts';
import { loadOverview } from '../../src/lib/server/overview.ts';
import { loadRunReport } from '../../src/lib/server/run-report.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const SRC = `ex-${tag}`;
const DST = `im-${tag}`;
const GW1 = `ex-${tag}-a`;
const GW2 = `ex-${tag}-b`;
const T = 1_796_130_000_000;
/** A bench with a live gateway's data at T2 and an import just before it, and an empty one. */
const RT = `rt-${tag}`;
const FRESH = `rf-${tag}`;
const LIVE = `rt-${tag}-g`;
const T2 = T + 200_000;
let app: RunningApp;
let op: string;
let obs: string;

const api = (token: string, path: string, init: RequestInit = {}) =>
  fetch(new URL(path, app.url), { ...init, headers: { authorization: `Bearer ${token}`, ...(init.headers as Record<string, string>) } });

/** bins per (key, t) of a gateway, as stored. */
async function binsOf(gatewayId: string): Promise<Map<string, number>> {
  const rows = await getDb().select().from(countBatches).where(eq(countBatches.gatewayId, gatewayId));
  const out = new Map<string, number>();
  for (const r of rows) r.keys.forEach((k, i) => unpackCounts(r.counts).slice(i * r.n, (i + 1) * r.n).forEach((c, j) => out.set(`${k}@${r.t0 + j * r.dt}`, c)));
  for (const r of rows) r.x?.forEach((x, j) => out.set(`x@${r.t0 + j * r.dt}`, x));
  for (const r of rows) (r.cc && unpackCounts(r.cc))?.forEach((c, j) => out.set(`cc@${r.t0 + j * r.dt}`, c));
  return out;
}

beforeAll(async () => {
  app = await startWebApp();
  op = (await userWithToken('operator', 'io-op')).token;
  obs = (await userWithToken('observer', 'io-obs')).token;
  await createBench({ id: SRC, name: 'Export source', wavelengthNm: 1550 });
  await createBench({ id: DST, name: 'Import target', wavelengthNm: 1550 });
  await createGateway(GW1, SRC);
  await createGateway(GW2, SRC);
  const db = getDb();
  await db.insert(channels).values([
    { gatewayId: GW1, key: 'a', benchId: SRC, role: 'out_a', label: 'Port A', darkRate: 12.5, darkRateErr: 0.4, deadTimeNs: 22 },
    { gatewayId: GW1, key: 'b', benchId: SRC, role: 'out_b', label: 'Port B' },
    { gatewayId: GW2, key: 'h', benchId: SRC, role: 'herald', label: 'Herald' },
  ]);
  // Two contiguous batches and one after a gap on GW1 (with x and cc), one batch on GW2 on the same grid.
  const mk = (gw: string, t0: number, n: number, keys: string[], seed: number, xcc: boolean) => ({
    gatewayId: gw,
    t0,
    t1: t0 + n * 10,
    dt: 10,
    n,
    keys,
    counts: packCounts(Array.from({ length: n * keys.length }, (_, i) => (i * 7919 + seed) % 1000)),
    x: xcc ? Array.from({ length: n }, (_, i) => 0.1 * i + seed / 3) : null,
    cc: xcc ? packCounts(Array.from({ length: n }, (_, i) => i % 3)) : null,
    boot: 'b',
    seq: seed,
  });
  await db.insert(countBatches).values([mk(GW1, T, 300, ['a', 'b'], 1, true), mk(GW1, T + 3000, 300, ['a', 'b'], 2, true), mk(GW1, T + 9000, 100, ['a', 'b'], 3, true), mk(GW2, T + 1000, 500, ['h'], 4, false)]);
});
afterAll(async () => app?.close());

describe('export and import', () => {
  it('exports CSV with metadata, imports it into a new run with identical bins and rollups', async () => {
    const res = await api(obs, `/api/v1/benches/${SRC}/export?from=${T}&to=${T + 10_000}&format=csv`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toContain('text/csv');
    const csv = await res.text();
    expect(csv).toContain('# wavelength_nm: 1550');
    expect(csv).toContain(`# channel ${GW1}/a: role=out_a; label=Port A; dark_rate_cps=12.5; dark_rate_err_cps=0.4; dead_time_ns=22`);
    const header = csv.split('\n').find((l) => !l.startsWith('#'))!;
    expect(header).toBe(`t_ms,${GW1}/a,${GW1}/b,${GW2}/h,x,cc`);

    // A span all three channels cover, so every bin of the import is compared with its source below.
    const partial = await (await api(obs, `/api/v1/benches/${SRC}/export?from=${T + 1000}&to=${T + 3000}`)).text();
    const preview = await api(op, `/api/v1/benches/${DST}/import/preview`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: partial });
    const p = (await preview.json()) as { dtMs: number; rows: number; channels: { key: string }[]; issues: unknown[]; firstRows: string[][] };
    expect(p).toMatchObject({ dtMs: 10, rows: 200, issues: [] });
    expect(p.channels.map((c) => c.key)).toEqual(['a', 'b', 'h']);
    expect(p.firstRows).toHaveLength(10);
    expect(await getDb().select().from(runs).where(eq(runs.benchId, DST))).toHaveLength(0);

    const imported = await api(op, `/api/v1/benches/${DST}/import?title=Offline%20night`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: partial });
    expect(imported.status).toBe(201);
    const r = (await imported.json()) as { runId: number; gatewayId: string; bins: number; fromMs: number; toMs: number };
    expect(r).toMatchObject({ gatewayId: `imp-${r.runId}`, bins: 200, fromMs: T + 1000, toMs: T + 3000 });

    const [gw] = await getDb().select().from(gateways).where(eq(gateways.id, r.gatewayId));
    expect(gw).toMatchObject({ benchId: DST, tokenHash: null });
    const [run] = await getDb().select().from(runs).where(eq(runs.id, r.runId));
    expect(run).toMatchObject({ source: 'import', startMs: T + 1000, endMs: T + 3000, title: 'Offline night' });
    // Its report says who imported it, not that they started a run at the recording's time.
    const report = (await (await api(obs, `/runs/${r.runId}`)).text()).replaceAll('<!-- -->', '');
    expect(report).toMatch(/· imported from a file by \S+@/);
    expect(report).not.toContain('started by');
    const [chA] = await getDb().select().from(channels).where(and(eq(channels.gatewayId, r.gatewayId), eq(channels.key, 'a')));
    expect(chA).toMatchObject({ label: 'Port A', darkRate: 12.5, deadTimeNs: 22 });

    const src1 = await binsOf(GW1);
    const src2 = await binsOf(GW2);
    const dst = await binsOf(r.gatewayId);
    expect(dst.size).toBe(200 * 5);
    for (const [k, v] of dst) expect([k, v]).toEqual([k, k.startsWith('h@') ? src2.get(k) : src1.get(k)]);
    const roll = await getDb().select().from(rollups).where(eq(rollups.gatewayId, r.gatewayId));
    const fineA = roll.filter((x) => x.key === 'a' && x.stepMs === 1000).reduce((s, x) => s + x.sums.reduce((a, b) => a + b, 0), 0);
    let expectA = 0;
    for (const [k, v] of dst) if (k.startsWith('a@')) expectA += v;
    expect(fineA).toBe(expectA);

    // The full range (with a gap and uneven columns) round-trips through JSON too.
    const json = (await (await api(obs, `/api/v1/benches/${SRC}/export?from=${T}&to=${T + 10_000}&format=json`)).json()) as { columns: string[]; rows: (number | null)[][] };
    expect(json.columns).toEqual(['t_ms', `${GW1}/a`, `${GW1}/b`, `${GW2}/h`, 'x', 'cc']);
    expect(json.rows).toHaveLength(300 + 300 + 100); // GW2's bins all fall on GW1's rows
    expect(json.rows.map((row) => row[0])).toEqual([...json.rows.map((row) => row[0]!)].sort((a, b) => a - b));
  });

  it('refuses an import over times the bench already holds, live or imported, and stores nothing', async () => {
    // The first test imported this span into DST; SRC holds it live.
    const partial = await (await api(obs, `/api/v1/benches/${SRC}/export?from=${T + 1000}&to=${T + 3000}`)).text();
    const before = (await getDb().select().from(runs)).length;
    const [offline] = await getDb().select().from(runs).where(and(eq(runs.benchId, DST), eq(runs.title, 'Offline night')));
    const span = { fileFromMs: T + 1000, fileToMs: T + 3000, heldFromMs: T + 1000, heldToMs: T + 3000 };
    const expected = {
      // An earlier import is named by its run, never by its pseudo-gateway.
      [DST]: { ...span, held: { kind: 'import', runId: offline!.id, title: 'Offline night' }, sameBench: false },
      // The file is SRC's own export: its data is there already.
      [SRC]: { ...span, held: { kind: 'live', gateway: GW1 }, sameBench: true },
    };
    for (const bench of [DST, SRC]) {
      const preview = (await (await api(op, `/api/v1/benches/${bench}/import/preview`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: partial })).json()) as { issues: unknown[]; overlap: unknown };
      expect(preview).toMatchObject({ issues: [], overlap: expected[bench] });
      const res = await api(op, `/api/v1/benches/${bench}/import?title=Again`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: partial });
      expect(res.status).toBe(409);
      const body = (await res.json()) as { error: string; overlap: unknown };
      expect(body.overlap).toEqual(preview.overlap);
      expect(body.error).not.toContain('imp-');
      expect(body.error).toContain(`from ${new Date(T + 1000).toISOString().slice(0, 19).replace('T', ' ')} UTC`);
      expect(body.error).toMatch(bench === SRC ? /export of this bench, so its data is already here/ : /import the file into a bench with no data in that time/);
    }
    expect((await getDb().select().from(runs)).length).toBe(before);
    expect(await getDb().select().from(gateways).where(and(like(gateways.id, 'imp-%'), eq(gateways.benchId, SRC)))).toHaveLength(0);
  });

  it('keeps an imported run out of the live bench: no gateway to be online, no live channels; history and reports still read it', async () => {
    const live = await loadBenchView(DST, { imports: 'exclude' });
    const past = await loadBenchView(DST, { imports: 'include' });
    expect(live!.gateways).toEqual([]);
    expect(live!.channels).toEqual([]);
    expect(past!.gateways).toEqual([]);
    expect(past!.channels.map((c) => c.key)).toEqual(['a', 'b', 'h']);
    expect((await loadOverview()).find((b) => b.id === DST)).toMatchObject({ gateways: [] });
  });

  it('warns in the preview when the file was recorded at another wavelength than the bench\'s', async () => {
    const file = ['# fringewise counts csv v1', '# bench: red (HeNe bench)', '# wavelength_nm: 632.8', 't_ms,a,b', '5000,1,2', '5010,3,4'].join('\n');
    const p = (await (await api(op, `/api/v1/benches/${DST}/import/preview`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: file })).json()) as { issues: unknown[]; warnings: string[]; overlap: unknown };
    expect(p).toMatchObject({ issues: [], overlap: null });
    expect(p.warnings).toHaveLength(1);
    expect(p.warnings[0]).toContain('recorded at 632.8 nm and this bench is set to 1550 nm');
    const same = (await (await api(op, `/api/v1/benches/${DST}/import/preview`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: file.replace('632.8', '1550') })).json()) as { warnings: string[] };
    expect(same.warnings).toEqual([]);
  });

  it('says once that a JSON export cannot be imported, in the preview and the import', async () => {
    const json = await (await api(obs, `/api/v1/benches/${SRC}/export?from=${T}&to=${T + 10_000}&format=json`)).text();
    const issue = { line: 1, message: 'only CSV can be imported; this looks like a JSON export: export the range or run as CSV and import that' };
    const p = (await (await api(op, `/api/v1/benches/${DST}/import/preview`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: json })).json()) as { issues: unknown[] };
    expect(p).toMatchObject({ issues: [issue] });
    const res = await api(op, `/api/v1/benches/${DST}/import?title=From%20JSON`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: `\uFEFF\n  ${json}` });
    expect(res.status).toBe(422);
    expect(((await res.json()) as { issues: unknown[] }).issues).toEqual([issue]);
    expect(await getDb().select().from(runs).where(eq(runs.title, 'From JSON'))).toHaveLength(0);
  });

  it('refuses a corrupt file with line numbers and stores nothing', async () => {
    const bad = ['# from a lab notebook', 't_ms,a,b,x', '1000,5,6,0.5', '1010,5,6,0.6', '1020,5,-1,0.7', '1030,5,6,nope', '1045,5,6,0.9'].join('\n');
    const res = await api(op, `/api/v1/benches/${DST}/import?title=Broken`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: bad });
    expect(res.status).toBe(422);
    const body = (await res.json()) as { error: string; issues: { line: number; message: string }[] };
    expect(body.error).toContain('nothing was stored');
    expect(body.issues.map((i) => i.line)).toEqual([5, 6, 7]);
    expect(body.issues[0]!.message).toContain('b:');
    expect(body.issues[2]!.message).toContain('not a multiple of the bin width 10 ms');
    expect(await getDb().select().from(runs).where(eq(runs.title, 'Broken'))).toHaveLength(0);
  });

  it('refuses an oversized upload (413) and stores nothing, with or without a declared length', async () => {
    const big = new Uint8Array(51 * 1024 * 1024).fill(0x30);
    const res = await api(op, `/api/v1/benches/${DST}/import?title=Huge`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: big });
    expect(res.status).toBe(413);
    expect(((await res.json()) as { error: string }).error).toContain('50 MiB');
    // Streamed past the cap after rows were already written inside the transaction: rolled back.
    const rows = ['t_ms,a'].concat(Array.from({ length: 5000 }, (_, i) => `${1000 + i * 10},${i}`)).join('\n');
    const stream = new Blob([rows]).stream();
    await expect(importCounts(DST, stream, { title: 'Capped', userId: null, maxBytes: 20_000 })).rejects.toMatchObject({ status: 413 });
    expect(await getDb().select().from(runs).where(like(runs.title, 'Capped%'))).toHaveLength(0);
    expect(await getDb().select().from(runs).where(eq(runs.title, 'Huge'))).toHaveLength(0);
  });

  it('exports only channels with data, and an export over a live gateway and an import imports again', async () => {
    await createBench({ id: RT, name: 'Round trip', wavelengthNm: 1550 });
    await createBench({ id: FRESH, name: 'Round trip target', wavelengthNm: 1550 });
    await createGateway(LIVE, RT);
    await getDb().insert(channels).values([
      { gatewayId: LIVE, key: 'a', benchId: RT, label: 'Port A' },
      { gatewayId: LIVE, key: 'b', benchId: RT, label: 'Port B' },
    ]);
    const live = (t0: number, seed: number) => ({
      gatewayId: LIVE, t0, t1: t0 + 1000, dt: 10, n: 100, keys: ['a', 'b'], boot: 'b', seq: seed,
      counts: packCounts(Array.from({ length: 200 }, (_, i) => (i * 31 + seed) % 500)),
      x: Array.from({ length: 100 }, (_, i) => i / 10), cc: null,
    });
    await getDb().insert(countBatches).values([live(T2, 1), live(T2 + 1000, 2)]);
    // An offline recording before the live data: the bench now holds imp-N/a and imp-N/b too.
    const offline = ['t_ms,a,b,x', ...Array.from({ length: 150 }, (_, i) => `${T2 - 5000 + i * 10},${100 + i},${200 + i},${i / 7}`)].join('\n');
    const first = await api(op, `/api/v1/benches/${RT}/import?title=Offline`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: offline });
    expect(first.status).toBe(201);
    const imp = ((await first.json()) as { gatewayId: string; runId: number });

    const header = (csv: string) => csv.split('\n').find((l) => !l.startsWith('#'));
    const liveOnly = await (await api(obs, `/api/v1/benches/${RT}/export?from=${T2}&to=${T2 + 2000}`)).text();
    expect(header(liveOnly)).toBe(`t_ms,${LIVE}/a,${LIVE}/b,x`);
    expect(liveOnly).not.toContain(imp.gatewayId);
    // The imported run on its own, its outputs in the usual roles.
    const runCsv = await (await api(obs, `/api/v1/benches/${RT}/export?run=${imp.runId}`)).text();
    expect(header(runCsv)).toBe(`t_ms,${imp.gatewayId}/a,${imp.gatewayId}/b,x`);
    expect(runCsv).toContain(`# channel ${imp.gatewayId}/a: role=out_a;`);

    const both = await (await api(obs, `/api/v1/benches/${RT}/export?from=${T2 - 5000}&to=${T2 + 2000}`)).text();
    expect(header(both)).toBe(`t_ms,${LIVE}/a,${LIVE}/b,${imp.gatewayId}/a,${imp.gatewayId}/b,x`);
    const preview = (await (await api(op, `/api/v1/benches/${FRESH}/import/preview`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: both })).json()) as { issues: unknown[]; rows: number; channels: { key: string }[] };
    expect(preview).toMatchObject({ issues: [], rows: 350 });
    expect(preview.channels.map((c) => c.key)).toEqual(['a', 'b']);
    const again = await api(op, `/api/v1/benches/${FRESH}/import?title=Round%20trip`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: both });
    expect(again.status).toBe(201);
    const r = (await again.json()) as { gatewayId: string; bins: number };
    expect(r.bins).toBe(350);
    const sums = (bins: Map<string, number>, key: string) => [...bins].filter(([k]) => k.startsWith(`${key}@`)).reduce((s, [, v]) => s + v, 0);
    const [srcLive, srcImp, dst] = await Promise.all([binsOf(LIVE), binsOf(imp.gatewayId), binsOf(r.gatewayId)]);
    for (const key of ['a', 'b', 'x']) expect(sums(dst, key)).toBeCloseTo(sums(srcLive, key) + sums(srcImp, key), 6);
    expect(dst.size).toBe(srcLive.size + srcImp.size);
  });

  it('reports a run with the channels that hold data in it, an imported run with its outputs as A and B', async () => {
    const [imported] = await getDb().select().from(runs).where(and(eq(runs.benchId, RT), eq(runs.source, 'import')));
    const [liveRun] = await getDb().insert(runs).values({ benchId: RT, title: 'Live', startMs: T2, endMs: T2 + 2000 }).returning();
    const imp = await loadRunReport(imported!.id);
    expect(imp!.channels.map((c) => [c.id, c.role, c.label])).toEqual([
      [`imp-${imported!.id}/a`, 'out_a', 'a'],
      [`imp-${imported!.id}/b`, 'out_b', 'b'],
    ]);
    expect(imp!.corrections.map((c) => c.gateway)).toEqual([`imp-${imported!.id}`, `imp-${imported!.id}`]);
    const liveReport = await loadRunReport(liveRun!.id);
    expect(liveReport!.channels.map((c) => [c.id, c.role])).toEqual([
      [`${LIVE}/a`, 'out_a'],
      [`${LIVE}/b`, 'out_b'],
    ]);
    expect(liveReport!.corrections).toHaveLength(2);
  });

  it('reads an upload to its end before answering, and closes the connection past the cap', async () => {
    const preview = (body: BodyInit) => api(op, `/api/v1/benches/${DST}/import/preview`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body });
    const refused = await preview(new Uint8Array(51 * 1024 * 1024).fill(0x30));
    expect(refused.status).toBe(413);
    expect(refused.headers.get('connection')).toBe('close');
    await refused.body?.cancel();
    // 20 problems in the first lines end the parse; the other 16 MB are read and dropped, so the
    // connection is free for the next request at once.
    const bad = 't_ms,a\n' + 'x,1\n'.repeat(25) + '1000000,1\n'.repeat(1_600_000);
    const stopped = await preview(bad);
    expect(((await stopped.json()) as { issues: unknown[] }).issues).toHaveLength(20);
    expect(stopped.headers.get('connection')).not.toBe('close');
    const started = Date.now();
    const next = await preview('t_ms,a\n9000,1\n9010,2\n');
    expect(((await next.json()) as { issues: unknown[] }).issues).toEqual([]);
    expect(Date.now() - started).toBeLessThan(1000);
  });

  it('keeps reading a refused upload a while after its 413, so the client reads the answer rather than a reset', async () => {
    // A client that writes its whole body before reading (as browsers and most scripts do) is still
    // sending when the 413 leaves. Closing the socket with its bytes unread makes the kernel answer
    // them with a reset, which can reach the client before the 413 does ("lingering close",
    // RFC 9112 §9.6). Here the client goes on writing after the answer: every write must be taken,
    // and the connection then end cleanly.
    const { port } = new URL(app.url);
    // Half-open allowed, as a client still writing its body is: the server's end of sending must not end the upload.
    const socket = net.connect({ port: Number(port), host: '127.0.0.1', allowHalfOpen: true });
    await new Promise<void>((resolve) => socket.once('connect', () => resolve()));
    let reply = '';
    let failed: Error | null = null;
    socket.on('data', (d: Buffer) => (reply += d.toString('latin1')));
    socket.on('error', (e) => (failed = e));
    const ended = new Promise<void>((resolve) => socket.once('close', () => resolve()));
    socket.write(
      `POST /api/v1/benches/${DST}/import/preview HTTP/1.1\r\nHost: 127.0.0.1\r\nAuthorization: Bearer ${op}\r\n` +
        `Content-Type: text/csv\r\nContent-Length: ${60 * 1024 * 1024}\r\n\r\n`,
    );
    await expect.poll(() => reply).toMatch(/^HTTP\/1\.1 413 /);
    const chunk = Buffer.alloc(256 * 1024, 0x30);
    for (let i = 0; i < 8 && !failed; i++) {
      await new Promise<void>((resolve) =>
        socket.write(chunk, (err) => {
          if (err) failed = err;
          resolve();
        }),
      );
      await new Promise((r) => setTimeout(r, 20));
    }
    socket.end();
    await ended;
    expect(failed).toBeNull();
    expect(reply).toContain('larger than');
  });

  it('lets only operators import', async () => {
    const res = await api(obs, `/api/v1/benches/${DST}/import?title=x`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: 't_ms,a\n0,1\n10,2' });
    expect(res.status).toBe(403);
  });
});
