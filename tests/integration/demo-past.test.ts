// The demo lab's recorded past: `npm start` on a fresh database writes each demo bench's recent
// past under its gateway's own id (rows and rollups), fits its sweeps with the channels' seeded
// corrections and adds the finished runs with their notes, all ending before the simulated
// gateways' first bin; of the seeded alarm rules only the one demo alarm trips; a second start adds
// nothing. A first start killed between a bench's bins and its runs leaves nothing of that bench's
// past, and the next start writes the same demo as an uninterrupted one.
import { fork } from 'node:child_process';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { findDemoBench } from '../../simulators/demo-benches.ts';
import { DEMO_PAST, minutesBefore } from '../../simulators/demo-past.ts';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { listNotes, listRuns } from '../../src/lib/server/runs.ts';
import { DEMO_PAST_BOOT } from '../../src/lib/server/seed-past.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

let db: FreshDatabase | undefined;
let app: RunningApp | undefined;
/** The demo an uninterrupted first start wrote, its times counted from each recording's end. */
let uninterrupted: unknown;

afterAll(async () => {
  await app?.close();
  await db?.restore();
});

const query = async <T extends Record<string, unknown>>(text: string, values: unknown[]) => (await getDbHandle().pool.query<T>(text, values)).rows;

/** The recorded rows of a gateway: how many, their span and their bins. */
async function recorded(gateway: string) {
  const [r] = await query<{ rows: string; t0: string; t1: string; bins: string }>(
    'select count(*) as rows, min(t0) as t0, max(t1) as t1, sum(n) as bins from count_batches where gateway_id = $1 and boot = $2',
    [gateway, DEMO_PAST_BOOT],
  );
  return { rows: Number(r!.rows), t0: Number(r!.t0), t1: Number(r!.t1), bins: Number(r!.bins) };
}

/** What the past consists of, to compare after a second start. */
async function everything() {
  const out: Record<string, unknown> = {};
  for (const past of DEMO_PAST) {
    const bench = findDemoBench(past.benchId)!;
    const runs = await listRuns({ benchId: bench.id });
    out[bench.id] = {
      recorded: await recorded(bench.gateway),
      runs: await Promise.all(runs.map(async (r) => ({ ...r, notes: (await listNotes(r.id)).map((n) => [n.atMs, n.body]) }))),
      sweeps: (await query('select id from sweeps where bench_id = $1 and end_ms <= (select max(t1) from count_batches where gateway_id = $2 and boot = $3) order by id', [bench.id, bench.gateway, DEMO_PAST_BOOT])).length,
      corrections: await query('select key, dark_rate, dark_rate_err, dead_time_ns, dead_time_model, efficiency from channels where gateway_id = $1 order by key', [bench.gateway]),
      rules: await query('select id, name, metric, channel, threshold, clear_threshold, hold_seconds, severity, recipients, enabled, updated_at from alarm_rules where bench_id = $1 order by id', [bench.id]),
    };
  }
  return out;
}

/**
 * Epoch times in `v` as offsets from `t1`, so pasts written at different moments compare equal when
 * they are the same demo; other numbers to 10 figures (a snapshot's phase drift is fitted over
 * epoch times, which moves its last digits).
 */
function relativeTo(v: unknown, t1: number): unknown {
  if (typeof v === 'number') return v > 1e12 ? v - t1 : Number(v.toPrecision(10));
  if (Array.isArray(v)) return v.map((x) => relativeTo(x, t1));
  if (v && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([k, x]) => [k, k === 'id' || k === 'runId' ? '(id)' : relativeTo(x, t1)]));
  return v;
}

/** Each bench's past as a newcomer finds it: recording, fitted passes, runs, notes and snapshots, timed from its end. */
async function demoShape() {
  const out: Record<string, unknown> = {};
  for (const past of DEMO_PAST) {
    const bench = findDemoBench(past.benchId)!;
    const r = await recorded(bench.gateway);
    const sweeps = await query('select start_ms, end_ms, direction, visibility, visibility_net, phase, period_x, counts from sweeps where bench_id = $1 and end_ms <= $2 order by start_ms', [bench.id, r.t1]);
    const runs = await Promise.all((await listRuns({ benchId: bench.id })).map(async (run) => ({ ...run, notes: await listNotes(run.id) })));
    out[bench.id] = relativeTo({ recorded: { rows: r.rows, bins: r.bins, span: r.t1 - r.t0 }, sweeps, runs }, r.t1);
  }
  return out;
}

describe('the demo lab on a fresh database', () => {
  beforeAll(async () => {
    db = await useFreshDatabase('demopast');
    app = await startWebApp({ simulate: true });
  });

  it('holds each demo bench’s recent past, with rollups, ending before its live bins begin', async () => {
    for (const past of DEMO_PAST) {
      const bench = findDemoBench(past.benchId)!;
      const r = await recorded(bench.gateway);
      expect(r.t1 - r.t0, bench.id).toBe(minutesBefore(past.minutes));
      // Every 10 ms bin of the span, once.
      expect(r.bins, bench.id).toBe(minutesBefore(past.minutes) / 10);
      // Buckets wholly inside the recording: the live bins may already share its last minute.
      for (const step of [1_000, 60_000]) {
        const [roll] = await query<{ bins: string }>(
          `select sum(u.b) as bins from rollups r, unnest(r.bins) with ordinality as u(b, i)
            where r.gateway_id = $1 and r.key = 'a' and r.step_ms = $2 and r.block_t0 + (u.i - 1) * $2 >= $3 and r.block_t0 + u.i * $2 <= $4`,
          [bench.gateway, step, r.t0, r.t1],
        );
        expect(Number(roll!.bins), `${bench.id} ${step} ms`).toBe((Math.floor(r.t1 / step) - Math.ceil(r.t0 / step)) * (step / 10));
      }
      // The simulated gateway carries on after the recording, never inside it.
      await expect.poll(async () => (await query('select 1 from count_batches where gateway_id = $1 and boot <> $2 limit 1', [bench.gateway, DEMO_PAST_BOOT])).length, { timeout: 20_000 }).toBe(1);
      const [live] = await query<{ t0: string }>('select min(t0) as t0 from count_batches where gateway_id = $1 and boot <> $2', [bench.gateway, DEMO_PAST_BOOT]);
      expect(Number(live!.t0), bench.id).toBeGreaterThanOrEqual(r.t1);
    }
  });

  it('has fitted the recorded sweeps with the seeded corrections, net of darks at the optics’ visibility', async () => {
    for (const past of DEMO_PAST) {
      const bench = findDemoBench(past.benchId)!;
      const r = await recorded(bench.gateway);
      const fits = await query<{ visibility: number; visibility_net: number | null; visibility_net_err: number | null }>(
        'select visibility, visibility_net, visibility_net_err from sweeps where bench_id = $1 and start_ms >= $2 and end_ms <= $3',
        [bench.id, r.t0, r.t1],
      );
      expect(fits.length, bench.id).toBeGreaterThanOrEqual(bench.id === 'mz-1550' ? 4 : 8);
      // Every pass has its net V: the darks were calibrated before the past was fitted.
      expect(fits.every((f) => f.visibility_net !== null && f.visibility_net_err !== null), bench.id).toBe(true);
      // The best alignment of the morning, net of darks and through the dead time, at the optics' own.
      const best = Math.max(...fits.map((f) => f.visibility_net!));
      expect(best, bench.id).toBeGreaterThan(bench.model.optics.visibility - 0.01);
      expect(best, bench.id).toBeLessThan(bench.model.optics.visibility + 0.01);
    }
    // The InGaAs bench's darks (600–900/s against ≈ 10 kc/s at the bright fringe) hide much of its
    // fringe from the raw fit; the net one restores it.
    const fibre = findDemoBench('mz-1550')!;
    const fits = await query<{ visibility: number; visibility_net: number }>('select visibility, visibility_net from sweeps where bench_id = $1', [fibre.id]);
    for (const f of fits) {
      expect(f.visibility).toBeLessThan(fibre.model.optics.visibility - 0.1);
      expect(f.visibility_net - f.visibility).toBeGreaterThan(0.1);
    }
  });

  it('has the finished runs with their notes and snapshots, one kept', async () => {
    const all = DEMO_PAST.flatMap((p) => p.runs.map((r) => ({ benchId: p.benchId, ...r })));
    expect(all.length).toBeGreaterThanOrEqual(2);
    let kept = 0;
    for (const want of all) {
      const [run] = (await listRuns({ benchId: want.benchId })).filter((r) => r.title === want.title);
      expect(run, want.title).toBeDefined();
      expect(run!.endMs! - run!.startMs).toBe(minutesBefore(want.start - want.end));
      expect(run!.startedBy?.name).toBe('Tomasz Eberle');
      if (run!.keep) kept++;
      const notes = await listNotes(run!.id);
      expect(notes.map((n) => n.body)).toEqual(want.notes.map((n) => n.body));
      for (const [i, n] of notes.entries()) {
        if (!want.notes[i]!.snapshot) continue;
        expect(n.snapshot?.benchId, n.body).toBe(want.benchId);
        expect(n.snapshot!.channels.find((c) => c.role === 'out_a')!.rateRaw, n.body).toBeGreaterThan(0);
        expect(n.snapshot!.visibility?.source, n.body).toBe('sweep');
      }
    }
    expect(kept).toBe(1);
  });

  it('serves the past to the history: counts from the rollups and the stability of a hold', async () => {
    const { token } = await userWithToken('observer', 'past');
    const get = async (path: string) => {
      const res = await fetch(new URL(path, app!.url), { headers: { authorization: `Bearer ${token}` } });
      expect(res.status, path).toBe(200);
      return (await res.json()) as Record<string, unknown>;
    };
    const r = await recorded('gw-633');
    // Whole minutes: the API's buckets lie on multiples of the step.
    const [from, to] = [Math.ceil(r.t0 / 60_000) * 60_000, Math.floor(r.t1 / 60_000) * 60_000];
    const counts = (await get(`/api/v1/benches/mz-633/counts?from=${from}&to=${to}&step=60000`)) as { channels: Record<string, (number | null)[]> };
    const perMinute = counts.channels['gw-633/a']!;
    expect(perMinute).toHaveLength((to - from) / 60_000);
    expect(perMinute.every((v) => v !== null && v > 0)).toBe(true);
    // The last ten minutes of the recording: the drive held at mid-fringe.
    const stability = (await get(`/api/v1/benches/mz-633/stability?from=${r.t1 - 600_000}&to=${r.t1}&step=1000`)) as { rates: unknown[]; phase: { points: unknown[] } | null };
    expect(stability.rates.length).toBe(2);
    expect(stability.phase?.points.length).toBeGreaterThan(3);
  });

  it('raises only the one demo alarm from the seeded rules while the demo runs, and mails it once', async () => {
    const benches = DEMO_PAST.map((p) => p.benchId);
    const [rules] = await query<{ n: string }>('select count(*) as n from alarm_rules where bench_id = any($1) and enabled', [benches]);
    expect(Number(rules!.n)).toBeGreaterThanOrEqual(benches.length * 2);
    const events = (demo: boolean) =>
      query<{ name: string; bench_id: string }>(`select r.name, e.bench_id from alarm_events e join alarm_rules r on r.id = e.rule_id where e.bench_id = any($1) and (r.name like 'DEMO ALARM%') = $2`, [benches, demo]);
    // The fibre bench's phase drift, once it has been read for the rule's 30 s hold.
    await expect.poll(async () => (await events(true)).map((e) => e.bench_id), { timeout: 120_000, interval: 1_000 }).toEqual(['mz-1550']);
    await expect.poll(async () => (await query<{ subject: string }>("select subject from caught_mail where subject like '[Fringewise]%'", [])).map((m) => m.subject), { timeout: 20_000 }).toEqual([
      expect.stringContaining('DEMO ALARM'),
    ]);
    // Every other rule stayed quiet while the live gateways ran through the tests above.
    expect(await events(false)).toEqual([]);
  });

  it('adds nothing on a later start', async () => {
    const before = await everything();
    await app!.close();
    app = await startWebApp({ simulate: true });
    expect(await everything()).toEqual(before);
    uninterrupted = await demoShape();
    await app.close();
    app = undefined;
    await db!.restore();
    db = undefined;
  });
});

describe('a first start killed in the middle of a bench’s past', () => {
  it('leaves nothing of that bench’s past, and the next start writes the same demo as an uninterrupted one', async () => {
    expect(uninterrupted, 'the uninterrupted demo, from the tests above').toBeDefined();
    db = await useFreshDatabase('demopastcut');
    // People, benches, gateways and lab settings, as the first start's earlier steps write them.
    app = await startWebApp({ simulate: false });
    await app.close();
    app = undefined;
    // The recorded past alone, in a process of its own, killed once the first bench's bins are written.
    const child = fork('tests/helpers/demo-past-interrupted.ts', [], { execArgv: ['--import', 'tsx'], env: { ...process.env, DATABASE_URL: db.url }, stdio: 'inherit' });
    const exited = new Promise((resolve) => child.once('exit', resolve));
    const cut = await new Promise<{ gateway: string; rows: number }>((resolve, reject) => {
      child.once('message', (m) => resolve(m as { gateway: string; rows: number }));
      child.once('exit', (code) => reject(new Error(`the first start ended by itself (${code})`)));
    });
    child.kill('SIGKILL');
    await exited;
    expect(cut.gateway).toBe(findDemoBench(DEMO_PAST[0]!.benchId)!.gateway);
    expect(cut.rows).toBeGreaterThan(0);
    for (const past of DEMO_PAST) {
      const bench = findDemoBench(past.benchId)!;
      expect(await query('select 1 from count_batches where gateway_id = $1 limit 1', [bench.gateway]), bench.id).toEqual([]);
      expect(await query('select 1 from rollups where gateway_id = $1 limit 1', [bench.gateway]), bench.id).toEqual([]);
      expect(await query('select 1 from sweeps where bench_id = $1 limit 1', [bench.id]), bench.id).toEqual([]);
      expect(await listRuns({ benchId: bench.id }), bench.id).toEqual([]);
    }

    app = await startWebApp({ simulate: true });
    expect(await demoShape()).toEqual(uninterrupted);
  });
});
