// Runs and notes API: operators start one run per bench, stop it, and note into it (optionally
// with a figures snapshot); observers read only.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningApp } from '../../src/server/app.ts';
import { openLive } from '../helpers/live-path.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

let app: RunningApp;
let op: string;
let obs: string;

const call = (token: string, path: string, body?: unknown) =>
  fetch(new URL(path, app.url), {
    method: body === undefined ? 'GET' : 'POST',
    headers: { authorization: `Bearer ${token}`, ...(body === undefined ? {} : { 'content-type': 'application/json' }) },
    ...(body === undefined ? {} : { body: JSON.stringify(body) }),
  });

beforeAll(async () => {
  app = await startWebApp();
  op = (await userWithToken('operator')).token;
  obs = (await userWithToken('observer')).token;
});
afterAll(async () => app?.close());

describe('runs API', () => {
  it('starts one active run per bench, takes notes, stops', async () => {
    expect((await call(obs, '/api/v1/benches/mz-633/runs', { title: 'x' })).status).toBe(403);
    expect((await call(op, '/api/v1/benches/mz-633/runs', { title: '  ' })).status).toBe(422);
    const started = await call(op, '/api/v1/benches/mz-633/runs', { title: 'Align' });
    expect(started.status).toBe(201);
    const run = (await started.json()) as { id: number; endMs: number | null };
    expect(run.endMs).toBeNull();
    expect((await call(op, '/api/v1/benches/mz-633/runs', { title: 'Second' })).status).toBe(409);

    const snapshot = { benchId: 'mz-633', at: Date.now(), windowMs: 1000, channels: [], visibility: { value: 0.98, err: 0.001, source: 'sweep', net: false }, phase: null, contrast: 0.1, g2: null, alpha: null, shotNoise: null };
    const noted = await call(op, `/api/v1/runs/${run.id}/notes`, { body: 'Fringes clean', snapshot });
    expect(noted.status).toBe(201);
    expect((await call(op, `/api/v1/runs/${run.id}/notes`, { body: 'x', snapshot: { ...snapshot, benchId: 'mz-810' } })).status).toBe(422);
    expect((await call(obs, `/api/v1/runs/${run.id}/notes`, { body: 'no' })).status).toBe(403);
    const notes = (await (await call(obs, `/api/v1/runs/${run.id}/notes`)).json()) as { body: string; snapshot: { visibility: { value: number } } | null }[];
    expect(notes).toHaveLength(1);
    expect(notes[0]!.snapshot?.visibility.value).toBe(0.98);

    expect((await call(obs, `/api/v1/runs/${run.id}/stop`, {})).status).toBe(403);
    expect((await call(op, `/api/v1/runs/${run.id}/stop`, {})).status).toBe(200);
    expect((await call(op, `/api/v1/runs/${run.id}/stop`, {})).status).toBe(409);
    // A stopped run's record still takes notes, timed after its end.
    const late = await call(op, `/api/v1/runs/${run.id}/notes`, { body: 'Later: the reference arm drifted' });
    expect(late.status).toBe(201);
    expect((await call(obs, `/api/v1/runs/${run.id}/notes`, { body: 'no' })).status).toBe(403);
    const list = (await (await call(obs, '/api/v1/benches/mz-633/runs')).json()) as { id: number; noteCount: number; endMs: number }[];
    expect(list.find((r) => r.id === run.id)?.noteCount).toBe(2);
  });

  it("pushes a run's start, its notes and its stop to everyone watching the bench", async () => {
    const live = await openLive(app.url, 'mz-1550', obs);
    // Run and note messages are features the hub carries beside the contract's own types.
    const typeOf = (m: unknown) => (m as { type: string }).type;
    try {
      const run = (await (await call(op, '/api/v1/benches/mz-1550/runs', { title: 'Followed from afar' })).json()) as { id: number };
      const started = (await live.next((m) => typeOf(m) === 'run')) as unknown as { run: { id: number; endMs: number | null; title: string } };
      expect(started.run).toMatchObject({ id: run.id, endMs: null, title: 'Followed from afar' });
      await call(op, `/api/v1/runs/${run.id}/notes`, { body: 'Seen live' });
      const noted = (await live.next((m) => typeOf(m) === 'note')) as unknown as { note: { runId: number; body: string } };
      expect(noted.note).toMatchObject({ runId: run.id, body: 'Seen live' });
      await call(op, `/api/v1/runs/${run.id}/stop`, {});
      const stopped = (await live.next((m) => typeOf(m) === 'run' && (m as unknown as { run: { endMs: number | null } }).run.endMs !== null)) as unknown as { run: { id: number } };
      expect(stopped.run.id).toBe(run.id);
    } finally {
      live.ws.close();
    }
  });

  it('lets operators keep a run from retention and release it, and shows the run page for both roles', async () => {
    const started = (await (await call(op, '/api/v1/benches/mz-810/runs', { title: 'Calibration to keep' })).json()) as { id: number; keep: boolean };
    expect(started.keep).toBe(false);
    expect((await call(obs, `/api/v1/runs/${started.id}/keep`, { keep: true })).status).toBe(403);
    expect((await call(op, `/api/v1/runs/${started.id}/keep`, { keep: 'yes' })).status).toBe(422);
    expect((await call(op, '/api/v1/runs/999999999/keep', { keep: true })).status).toBe(404);
    const kept = await call(op, `/api/v1/runs/${started.id}/keep`, { keep: true });
    expect(kept.status).toBe(200);
    expect(((await kept.json()) as { keep: boolean }).keep).toBe(true);
    const list = (await (await call(obs, '/api/v1/benches/mz-810/runs')).json()) as { id: number; keep: boolean }[];
    expect(list.find((r) => r.id === started.id)?.keep).toBe(true);
    const page = await call(obs, `/runs/${started.id}`);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain('retention never trims this run');
    expect(((await (await call(op, `/api/v1/runs/${started.id}/keep`, { keep: false })).json()) as { keep: boolean }).keep).toBe(false);
    await call(op, `/api/v1/runs/${started.id}/stop`, {});
  });
});
