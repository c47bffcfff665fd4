// Alarms end to end inside one process: rules with audit, evaluation on 'batch-stored' events,
// alarm_events rows, live pushes, acknowledgement, and e-mail through the real mail catcher.
import { createServer } from 'node:net';
import { and, desc, eq, inArray } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CountBatch } from '../../src/lib/contract/wire.ts';
import { AlarmEngine } from '../../src/lib/server/alarms/engine.ts';
import { acknowledge, listEvents } from '../../src/lib/server/alarms/event-store.ts';
import { mailPolicyStateSchema } from '../../src/lib/server/alarms/mail-policy.ts';
import { createRule, deleteRule, ruleInputSchema, updateRule } from '../../src/lib/server/alarms/rules.ts';
import { closeDb, getDb } from '../../src/lib/server/db/index.ts';
import { alarmEvents, alarmRules, auditLog, caughtMail, channels, gateways, settings } from '../../src/lib/server/db/schema.ts';
import { serverEvents } from '../../src/lib/server/events.ts';
import { startMailCatcher, type MailCatcher } from '../../src/lib/server/mail/catcher.ts';
import { createBench, createGateway, revokeGateway } from '../../src/lib/server/provisioning.ts';
import { runtime } from '../../src/lib/server/runtime.ts';
import type { AlarmMessage } from '../../src/lib/alarm-messages.ts';
import { userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `al-${tag}`;
const GW = `al-${tag}-gw`;
let catcher: MailCatcher;
let engine: AlarmEngine;
let operatorId: string;
const pushed: AlarmMessage[] = [];
const savedLive = runtime().live;

/** A one-second batch whose channels have the given rates (counts/s), ending now (so it is not stale). */
function batch(rates: Record<string, number>, t0 = Math.floor(Date.now() / 1000) * 1000 - 1000): CountBatch {
  const ch: Record<string, number[]> = {};
  for (const [k, r] of Object.entries(rates)) ch[k] = Array.from({ length: 10 }, () => r / 10);
  return { v: 1, boot: 'b', seq: 0, t0, dt: 100, ch };
}

const emit = (b: CountBatch) => serverEvents().emit('batch-stored', { benchId: BENCH, gatewayId: GW, batch: b, receivedAt: Date.now() });

async function eventsOf(ruleId: number) {
  await engine.idle();
  return await getDb().select().from(alarmEvents).where(eq(alarmEvents.ruleId, ruleId)).orderBy(alarmEvents.id);
}

async function mailTo(address: string, atLeast: number, timeoutMs = 5000) {
  const until = Date.now() + timeoutMs;
  for (;;) {
    const rows = await getDb().select().from(caughtMail).orderBy(desc(caughtMail.id)).limit(200);
    const mine = rows.filter((m) => m.to.includes(address));
    if (mine.length >= atLeast || Date.now() > until) return mine;
    await new Promise((r) => setTimeout(r, 100));
  }
}

/** The engine's saved mail state holds a mail to the address that the server refused, kept for a retry. */
async function awaitingRetry(address: string): Promise<boolean> {
  const [row] = await getDb().select().from(settings).where(eq(settings.name, `alarm-mail-${tag}`));
  const state = row && mailPolicyStateSchema.safeParse(row.value);
  return !!state?.success && state.data.retries.some((r) => r.mail.to.includes(address));
}

beforeAll(async () => {
  delete process.env['SMTP_URL'];
  catcher = await startMailCatcher(0);
  process.env['FRINGEWISE_CATCHER_URL'] = catcher.url;
  await createBench({ id: BENCH, name: `Alarm bench ${tag}`, wavelengthNm: 810 });
  await createGateway(GW, BENCH);
  // The channels the gateway's status would announce: rules name channels the bench has.
  await getDb().insert(channels).values(['a', 'b', 'c', 'd', 'e', 'f', 'g', 'h', 'i', 'j'].map((key) => ({ gatewayId: GW, key, benchId: BENCH })));
  operatorId = (await userWithToken('operator', 'alarm-op')).id;
  runtime().live = { publish: (_b, m) => void pushed.push(m as unknown as AlarmMessage), subscribe: () => () => undefined, clientCount: () => 0 };
  // Gather 150 ms, quiet 60 s: the test sees the first mail at once and no second one within its run.
  // A mail the server refused is tried again after 0.5 s, 1 s, 2 s, …
  engine = new AlarmEngine({ tickMs: 50, mail: { gatherMs: 150, quietMs: 60_000, retryMs: 500 }, mailStateName: `alarm-mail-${tag}` });
  await engine.start();
});

afterAll(async () => {
  await engine?.stop();
  if (savedLive) runtime().live = savedLive;
  else delete runtime().live;
  await catcher?.close();
  await closeDb();
});

describe('alarm rules', () => {
  it('validates hysteresis direction and channel form', () => {
    expect(ruleInputSchema.safeParse({ name: 'x', metric: 'rate_high', threshold: 10, clearThreshold: 20 }).success).toBe(false);
    expect(ruleInputSchema.safeParse({ name: 'x', metric: 'visibility_low', threshold: 0.8, clearThreshold: 0.7 }).success).toBe(false);
    expect(ruleInputSchema.safeParse({ name: 'x', metric: 'rate_high', channel: 'nogateway', threshold: 10, clearThreshold: 5 }).success).toBe(false);
    expect(ruleInputSchema.safeParse({ name: 'x', metric: 'phase_drift', channel: 'gw/a', threshold: 1, clearThreshold: 0.5 }).success).toBe(false);
    expect(ruleInputSchema.safeParse({ name: 'x', metric: 'rate_high', channel: 'gw/a', threshold: 10, clearThreshold: 5, recipients: ['a@b.example'] }).success).toBe(true);
  });

  it('audits every change with who, before and after', async () => {
    const input = ruleInputSchema.parse({ name: 'Audit me', metric: 'rate_low', threshold: 10, clearThreshold: 20, enabled: false });
    const rule = await createRule(BENCH, input, operatorId);
    await updateRule(BENCH, rule.id, { ...input, threshold: 5 }, operatorId);
    await deleteRule(BENCH, rule.id, operatorId);
    const rows = await getDb()
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'alarm_rule'), eq(auditLog.entityId, String(rule.id))))
      .orderBy(auditLog.id);
    expect(rows.map((r) => r.action)).toEqual(['create', 'update', 'delete']);
    expect(rows.every((r) => r.actorId === operatorId)).toBe(true);
    expect((rows[1]!.before as { threshold: number }).threshold).toBe(10);
    expect((rows[1]!.after as { threshold: number }).threshold).toBe(5);
    expect(rows[2]!.after).toBeNull();
  });
});

describe('alarm evaluation on ingest', () => {
  it('raises on the batch that crosses, mails the recipients, pushes live, clears past the clear threshold, and takes an acknowledgement', async () => {
    const rule = await createRule(
      BENCH,
      ruleInputSchema.parse({ name: 'Detector A overexposed', metric: 'rate_high', channel: `${GW}/a`, threshold: 1_000_000, clearThreshold: 800_000, severity: 'critical', recipients: [`night-${tag}@lab.example`] }),
      null,
    );
    await engine.reload();
    emit(batch({ a: 500_000, b: 2_000_000 }));
    expect(await eventsOf(rule.id)).toHaveLength(0);
    emit(batch({ a: 1_500_000, b: 10 }));
    const raised = await eventsOf(rule.id);
    expect(raised).toHaveLength(1);
    expect(raised[0]!.subject).toBe(`${GW}/a`);
    expect(raised[0]!.value).toBeCloseTo(1_500_000);
    expect(raised[0]!.clearedAt).toBeNull();
    expect(pushed.some((m) => m.type === 'alarm' && m.change === 'raised' && m.bench === BENCH && m.event.ruleId === rule.id)).toBe(true);

    emit(batch({ a: 900_000 })); // inside the hysteresis band: still raised
    expect((await eventsOf(rule.id))[0]!.clearedAt).toBeNull();
    emit(batch({ a: 700_000 }));
    expect((await eventsOf(rule.id))[0]!.clearedAt).not.toBeNull();

    const mails = await mailTo(`night-${tag}@lab.example`, 1);
    expect(mails).toHaveLength(1);
    const mail = mails[0]!;
    expect(mail.subject).toContain('CRITICAL');
    expect(mail.subject).toContain('Detector A overexposed');
    expect(mail.subject).toContain(`Alarm bench ${tag}`);
    // Raise and clear arrived within the gather window: one mail holding both.
    expect(mail.text).toContain(`${GW}/a`);
    expect(mail.text).toContain('1.50 Mc/s');

    const acked = await acknowledge(BENCH, raised[0]!.id, operatorId, 'Closed the shutter, lowered the pump');
    expect(acked.ackComment).toBe('Closed the shutter, lowered the pump');
    await expect(acknowledge(BENCH, raised[0]!.id, operatorId, 'again')).rejects.toMatchObject({ status: 409 });
    const listed = await listEvents({ benchIds: [BENCH] });
    expect(listed.find((e) => e.id === raised[0]!.id)?.ackedBy).toMatch(/alarm-op/);
  });

  it('raises only after the hold time, measured in data time', async () => {
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Dim', metric: 'rate_low', channel: `${GW}/b`, threshold: 100, clearThreshold: 200, holdSeconds: 2 }), null);
    await engine.reload();
    const t = Math.floor(Date.now() / 1000) * 1000 - 5000;
    emit(batch({ b: 10 }, t)); // ends t+1 s: hold starts
    emit(batch({ b: 10 }, t + 1000)); // ends t+2 s: held 1 s
    expect(await eventsOf(rule.id)).toHaveLength(0);
    emit(batch({ b: 10 }, t + 2000)); // ends t+3 s: held 2 s → raise
    expect(await eventsOf(rule.id)).toHaveLength(1);
  });

  it('does not count a gap in the data towards the hold time', async () => {
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Dim across a gap', metric: 'rate_low', channel: `${GW}/h`, threshold: 100, clearThreshold: 200, holdSeconds: 30 }), null);
    await engine.reload();
    const now = Math.floor(Date.now() / 1000) * 1000;
    emit(batch({ h: 10 }, now - 110_000)); // one dim second, then the gateway is offline for 49 s
    emit(batch({ h: 10 }, now - 60_000)); // dim again: nothing says the light stayed dim in between
    expect(await eventsOf(rule.id)).toHaveLength(0);
    for (let t = now - 59_000; t < now - 30_000; t += 1_000) emit(batch({ h: 10 }, t));
    expect(await eventsOf(rule.id)).toHaveLength(0);
    emit(batch({ h: 10 }, now - 30_000)); // 30 s of data dim without a break since the gap
    expect(await eventsOf(rule.id)).toHaveLength(1);
  });

  it('sends a mail that failed while the mail server was down once it is back', async () => {
    const to = `retry-${tag}@lab.example`;
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Raised while the mail server was down', metric: 'rate_high', channel: `${GW}/i`, threshold: 100, clearThreshold: 50, severity: 'critical', recipients: [to] }), null);
    await engine.reload();
    // A port nothing listens on: the connection is refused, as by a mail server that is down.
    const probe = createServer().listen(0, '127.0.0.1');
    await new Promise((r) => probe.once('listening', r));
    const port = (probe.address() as { port: number }).port;
    await new Promise((r) => probe.close(r));
    process.env['FRINGEWISE_CATCHER_URL'] = `smtp://127.0.0.1:${port}`;
    try {
      emit(batch({ i: 1000 }));
      expect(await eventsOf(rule.id)).toHaveLength(1);
      // Gathered for 150 ms, then refused and kept for a retry: waited for in the saved mail state,
      // since a loaded machine may take longer than any fixed wait, and the mail server must not
      // come back before the refusal (or the retry would go untested).
      await expect.poll(() => awaitingRetry(to), { timeout: 10_000 }).toBe(true);
    } finally {
      process.env['FRINGEWISE_CATCHER_URL'] = catcher.url;
    }
    const mails = await mailTo(to, 1, 8000);
    expect(mails).toHaveLength(1);
    expect(mails[0]!.subject).toContain('CRITICAL raised');
    expect(mails[0]!.subject).toContain('Raised while the mail server was down');
  });

  it('a flapping signal sends one mail, not a storm', async () => {
    const to = `flap-${tag}@lab.example`;
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Flappy', metric: 'rate_high', channel: `${GW}/c`, threshold: 1000, clearThreshold: 900, recipients: [to] }), null);
    await engine.reload();
    for (let i = 0; i < 40; i++) emit(batch({ c: i % 2 ? 500 : 5000 }));
    const events = await eventsOf(rule.id);
    expect(events).toHaveLength(20);
    // 40 changes: one mail now (however long a loaded machine takes to send it); whatever came
    // after it waits for the digest at the end of the quiet period, so no second one follows.
    expect(await mailTo(to, 1, 10_000)).toHaveLength(1);
    const mails = await mailTo(to, 2, 1000);
    expect(mails).toHaveLength(1);
    expect(mails[0]!.subject).toContain('Flappy');

    // Changes after that mail wait for the end of the quiet period, and the wait outlasts a restart:
    // the next engine (here with a 1 s quiet period) sends them as a digest.
    emit(batch({ c: 5000 }));
    emit(batch({ c: 500 }));
    await engine.idle();
    await engine.stop();
    engine = new AlarmEngine({ tickMs: 50, mail: { gatherMs: 150, quietMs: 1_000 }, mailStateName: `alarm-mail-${tag}` });
    await engine.start();
    const after = await mailTo(to, 2, 5000);
    expect(after).toHaveLength(2);
    expect(after[0]!.subject).toMatch(/digest: \d+ alarm changes .* - Flappy/);
    // The two mails account for all 42 changes (how many made the first depends on timing).
    const changes = after.map((m) => Number(/(\d+) alarm changes/.exec(m.subject)?.[1] ?? 1));
    expect(changes[0]! + changes[1]!).toBe(42);
  });

  it('closes the open alarms of a rule that is disabled', async () => {
    const input = ruleInputSchema.parse({ name: 'Soon off', metric: 'rate_high', channel: `${GW}/d`, threshold: 10, clearThreshold: 5 });
    const rule = await createRule(BENCH, input, null);
    await engine.reload();
    emit(batch({ d: 100 }));
    expect((await eventsOf(rule.id))[0]!.clearedAt).toBeNull();
    await updateRule(BENCH, rule.id, { ...input, enabled: false }, null);
    await engine.reload();
    expect((await eventsOf(rule.id))[0]!.clearedAt).not.toBeNull();
    const open = await getDb().select().from(alarmEvents).where(and(eq(alarmEvents.benchId, BENCH), inArray(alarmEvents.ruleId, [rule.id])));
    expect(open.every((e) => e.clearedAt !== null)).toBe(true);
  });

  it('keeps the alarms of a deleted rule, named as it was, and closes the open one at the deletion', async () => {
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Soon deleted', metric: 'rate_high', channel: `${GW}/j`, threshold: 100, clearThreshold: 50 }), null);
    await engine.reload();
    emit(batch({ j: 1000 }));
    emit(batch({ j: 10 }));
    emit(batch({ j: 1000 }));
    const raised = await eventsOf(rule.id);
    expect(raised.map((e) => e.clearedAt === null)).toEqual([false, true]);
    await acknowledge(BENCH, raised[0]!.id, operatorId, 'Beam block was out');
    const deletedFrom = Date.now();
    // As the server registers it (startAlarmEngine): deleteRule hands it the alarms it closed.
    runtime()['alarms'] = engine;
    try {
      await deleteRule(BENCH, rule.id, operatorId);
      await engine.idle();
    } finally {
      delete runtime()['alarms'];
    }

    const kept = await getDb().select().from(alarmEvents).where(inArray(alarmEvents.id, raised.map((e) => e.id))).orderBy(alarmEvents.id);
    expect(kept.map((e) => ({ ruleId: e.ruleId, ruleName: e.ruleName, metric: e.metric }))).toEqual([
      { ruleId: null, ruleName: 'Soon deleted', metric: 'rate_high' },
      { ruleId: null, ruleName: 'Soon deleted', metric: 'rate_high' },
    ]);
    expect(kept[0]!.clearedAt).toEqual(raised[0]!.clearedAt);
    expect(kept[0]!.ackComment).toBe('Beam block was out');
    expect(kept[1]!.clearedAt!.getTime()).toBeGreaterThanOrEqual(deletedFrom - 1);
    expect(kept[1]!.clearedAt!.getTime()).toBeLessThanOrEqual(Date.now());
    expect(pushed.some((m) => m.change === 'cleared' && m.event.id === raised[1]!.id && m.event.ruleId === null && m.event.ruleName === 'Soon deleted')).toBe(true);
    const [audit] = await getDb().select().from(auditLog).where(and(eq(auditLog.entity, 'alarm_rule'), eq(auditLog.entityId, String(rule.id)), eq(auditLog.action, 'delete')));
    expect(audit).toMatchObject({ actorId: operatorId, before: { name: 'Soon deleted' } });

    // Listed and acknowledged like any other, without their rule.
    const listed = (await listEvents({ benchIds: [BENCH], limit: 1000 })).filter((e) => e.ruleName === 'Soon deleted');
    expect(listed.map((e) => [e.id, e.ruleId, e.metric])).toEqual([
      [raised[1]!.id, null, 'rate_high'],
      [raised[0]!.id, null, 'rate_high'],
    ]);
    expect((await acknowledge(BENCH, raised[1]!.id, operatorId, 'Rule retired')).ackComment).toBe('Rule retired');
    emit(batch({ j: 1000 }));
    await engine.idle();
    expect(await getDb().select().from(alarmEvents).where(eq(alarmEvents.ruleName, 'Soon deleted'))).toHaveLength(2);
  });

  it('closes an open alarm whose rule went without closing it', async () => {
    // A rule deleted by hand in SQL leaves its open event without a rule: nothing could clear it.
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Deleted behind our back', metric: 'rate_high', channel: `${GW}/j`, threshold: 100, clearThreshold: 50 }), null);
    await engine.reload();
    emit(batch({ j: 1000 }));
    const [open] = await eventsOf(rule.id);
    expect(open!.clearedAt).toBeNull();
    await getDb().delete(alarmRules).where(eq(alarmRules.id, rule.id));
    await engine.reload();
    const [closed] = await getDb().select().from(alarmEvents).where(eq(alarmEvents.id, open!.id));
    expect(closed).toMatchObject({ ruleId: null, ruleName: 'Deleted behind our back' });
    expect(closed!.clearedAt).not.toBeNull();
  });

  it('raises again after a clear that was decided while the rules were reloading', async () => {
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Cleared during reload', metric: 'rate_high', channel: `${GW}/e`, threshold: 100, clearThreshold: 50 }), null);
    await engine.reload();
    emit(batch({ e: 1000 }));
    expect(await eventsOf(rule.id)).toHaveLength(1);
    // The reload (a rule saved, or the 30 s refresh) reads the open events before the clear is written.
    void engine.reload();
    emit(batch({ e: 10 }));
    const cleared = await eventsOf(rule.id);
    expect(cleared).toHaveLength(1);
    expect(cleared[0]!.clearedAt).not.toBeNull();
    emit(batch({ e: 1000 }));
    const again = await eventsOf(rule.id);
    expect(again).toHaveLength(2);
    expect(again[1]!.clearedAt).toBeNull();
  });

  it('closes an open alarm of a channel its rule no longer watches', async () => {
    const input = ruleInputSchema.parse({ name: 'Moved to another channel', metric: 'rate_high', channel: `${GW}/f`, threshold: 100, clearThreshold: 50 });
    const rule = await createRule(BENCH, input, null);
    await engine.reload();
    emit(batch({ f: 1000 }));
    expect((await eventsOf(rule.id))[0]!.clearedAt).toBeNull();
    // Now about g: no sample of f reaches the rule again, so nothing else would ever clear f's alarm.
    await updateRule(BENCH, rule.id, { ...input, channel: `${GW}/g` }, null);
    await engine.reload();
    expect((await eventsOf(rule.id))[0]!.clearedAt).not.toBeNull();
    emit(batch({ f: 1000, g: 10 }));
    expect(await eventsOf(rule.id)).toHaveLength(1);
  });

  it('closes the silence alarm of a gateway that is revoked', async () => {
    const quiet = `${GW}-q`;
    await createGateway(quiet, BENCH);
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Gateway quiet', metric: 'gateway_silent', channel: quiet, threshold: 5, clearThreshold: 1 }), null);
    await engine.reload();
    serverEvents().emit('gateway-status', { benchId: BENCH, gatewayId: quiet, status: { v: 1, state: 'online' } as never, at: Date.now() - 60_000 });
    engine.tick();
    expect((await eventsOf(rule.id))[0]!.clearedAt).toBeNull();
    // Revoked, it can never send again: its silence is no longer news.
    await revokeGateway(quiet);
    await engine.reload();
    expect((await eventsOf(rule.id))[0]!.clearedAt).not.toBeNull();
  });

  it('judges visibility_low on the net visibility where the darks are calibrated, as the bench page shows it', async () => {
    const rule = await createRule(BENCH, ruleInputSchema.parse({ name: 'Fringe washed out', metric: 'visibility_low', threshold: 0.8, clearThreshold: 0.85 }), null);
    await engine.reload();
    const sweep = (id: number, net: { value: number; err: number } | null) => {
      const endMs = Date.now() - 1_000;
      return { id, startMs: endMs - 2_000, endMs, direction: 'up' as const, visibility: 0.72, visibilityErr: 0.0034, visibilityNet: net?.value ?? null, visibilityNetErr: net?.err ?? null, phase: 0, periodX: 2.5, counts: 100_000 };
    };
    // Raw 0.72 with darks 50 of 250 counts per bin; net 0.90: the fringe is fine.
    serverEvents().emit('sweep-fitted', { benchId: BENCH, sweep: sweep(1, { value: 0.9, err: 0.0043 }) });
    expect(await eventsOf(rule.id)).toHaveLength(0);
    // Uncalibrated, the raw 0.72 is the only visibility there is.
    serverEvents().emit('sweep-fitted', { benchId: BENCH, sweep: sweep(2, null) });
    const raised = await eventsOf(rule.id);
    expect(raised).toHaveLength(1);
    expect(raised[0]!.value).toBeCloseTo(0.72, 12);
  });

  it('across a restart, counts no gateway silent for the time the server itself was down, and keeps a silence alarm raised before it', async () => {
    const restart = async () => {
      await engine.stop();
      engine = new AlarmEngine({ tickMs: 50, mail: { gatherMs: 150, quietMs: 60_000, retryMs: 500 }, mailStateName: `alarm-mail-${tag}` });
      await engine.start();
      engine.tick();
    };
    const [back, dead] = [`${GW}-back`, `${GW}-dead`];
    for (const gw of [back, dead]) await createGateway(gw, BENCH);
    const rule = (gw: string) => createRule(BENCH, ruleInputSchema.parse({ name: `Silent ${gw}`, metric: 'gateway_silent', channel: gw, threshold: 60, clearThreshold: 5 }), null);
    const [backRule, deadRule] = [await rule(back), await rule(dead)];
    await engine.reload();
    // The dead one fell silent two minutes ago while the server ran (its message stored, as ingest does): raised.
    await getDb().update(gateways).set({ lastSeenAt: new Date(Date.now() - 120_000) }).where(eq(gateways.id, dead));
    serverEvents().emit('gateway-status', { benchId: BENCH, gatewayId: dead, status: { v: 1, state: 'online' } as never, at: Date.now() - 120_000 });
    engine.tick();
    expect(await eventsOf(deadRule.id)).toHaveLength(1);
    // The other one's last message came five minutes ago, just before the server went down.
    await getDb().update(gateways).set({ lastSeenAt: new Date(Date.now() - 300_000) }).where(eq(gateways.id, back));
    await restart();
    expect(await eventsOf(backRule.id)).toHaveLength(0);
    const stillDead = await eventsOf(deadRule.id);
    expect(stillDead).toHaveLength(1);
    expect(stillDead[0]!.clearedAt).toBeNull();
  });
});
