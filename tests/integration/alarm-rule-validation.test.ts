// Alarm rules that could never work are refused on the server, by the admin form and the API
// alike: limits where the value cannot be (a negative rate, a visibility of 1.5), limits at the
// edge of the range that the value never passes, the raise/clear order each kind needs, channels
// and gateways the bench does not have, and a name the bench already uses. The form shows each
// reason under its box and marks the box; a refused rule stores nothing, not even an audit row.
import { and, count, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getDb } from '../../src/lib/server/db/index.ts';
import { alarmRules, auditLog, channels, gateways } from '../../src/lib/server/db/schema.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { HttpClient } from '../helpers/http-client.ts';
import { resetSignInLimits, startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `rv-${tag}`;
const OTHER = `rv-${tag}-2`;
const GW = `rv-${tag}-gw`;
const IMPORTED = `imp-rv${tag}`;
let app: RunningApp;
let admin: HttpClient;
let token: string;

beforeAll(async () => {
  app = await startWebApp();
  resetSignInLimits();
  const a = await userWithToken('admin', 'rules-admin');
  token = a.token;
  admin = new HttpClient(app.url);
  expect((await admin.signIn(a.email, a.password)).status).toBe(303);
  await createBench({ id: BENCH, name: `Rules bench ${tag}`, wavelengthNm: 810 });
  await createBench({ id: OTHER, name: `Other bench ${tag}`, wavelengthNm: 633 });
  await createGateway(GW, BENCH);
  // What the gateway's status would announce, and an imported recording's channel beside them.
  await getDb().insert(gateways).values({ id: IMPORTED, benchId: BENCH });
  await getDb().insert(channels).values([
    { gatewayId: GW, key: 'a', benchId: BENCH },
    { gatewayId: GW, key: 'b', benchId: BENCH },
    { gatewayId: IMPORTED, key: 'a', benchId: BENCH },
  ]);
});
afterAll(async () => app?.close());

/** The error shown under the box with this id (FieldError.astro). */
function fieldError(html: string, id: string): string | null {
  return new RegExp(`<p id="${id}-error"[^>]*>([^<]*)</p>`).exec(html)?.[1] ?? null;
}

function markedInvalid(html: string, id: string): boolean {
  return new RegExp(`<(?:input|select|textarea)[^>]*id="${id}"[^>]*aria-invalid="true"`).test(html);
}

/** Astro writes text with HTML entities; the messages hold quotes and slashes. */
const decode = (s: string | null) => s?.replaceAll('&amp;', '&').replaceAll('&lt;', '<').replaceAll('&gt;', '>').replaceAll('&#39;', "'").replaceAll('&quot;', '"').replaceAll('&#x2F;', '/') ?? null;

const api = (method: string, path: string, body: unknown) =>
  fetch(new URL(path, app.url), { method, headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' }, body: JSON.stringify(body) });

async function stored() {
  const [rules] = await getDb().select({ n: count() }).from(alarmRules);
  const [audits] = await getDb().select({ n: count() }).from(auditLog).where(eq(auditLog.entity, 'alarm_rule'));
  return { rules: rules!.n, audits: audits!.n };
}

type Field = 'name' | 'channel' | 'threshold' | 'clearThreshold';
const boxId: Record<Field, string> = { name: 'name', channel: 'channel', threshold: 'thr', clearThreshold: 'clr' };

interface Case {
  why: string;
  metric: string;
  channel?: string;
  threshold: number;
  clearThreshold: number;
  /** The reason under each box that has one; the others have none. */
  errors: Partial<Record<Field, string>>;
}

const NEVER_NEGATIVE = 'a channel rate is never below 0 counts/s';
const cases: Case[] = [
  // Rates
  { why: 'a negative rate raises at once and never clears', metric: 'rate_high', threshold: -100, clearThreshold: -200, errors: { threshold: NEVER_NEGATIVE, clearThreshold: NEVER_NEGATIVE } },
  { why: 'a negative clear limit', metric: 'rate_high', threshold: 100, clearThreshold: -1, errors: { clearThreshold: NEVER_NEGATIVE } },
  {
    why: 'clearing below 0 never happens',
    metric: 'rate_high',
    threshold: 100,
    clearThreshold: 0,
    errors: { clearThreshold: 'must be above 0 counts/s: the alarm clears once a channel rate falls below this, and it is never below 0 counts/s' },
  },
  { why: 'an above rule clearing above its threshold', metric: 'rate_high', threshold: 100, clearThreshold: 200, errors: { clearThreshold: 'for this metric the clear threshold must be at or below the threshold' } },
  {
    why: 'a floor at 0 never raises',
    metric: 'rate_low',
    threshold: 0,
    clearThreshold: 10,
    errors: { threshold: 'must be above 0 counts/s: the alarm raises once a channel rate falls below this, and it is never below 0 counts/s' },
  },
  { why: 'a negative floor', metric: 'rate_low', threshold: -5, clearThreshold: 10, errors: { threshold: NEVER_NEGATIVE } },
  { why: 'a below rule clearing under its threshold', metric: 'rate_low', threshold: 100, clearThreshold: 50, errors: { clearThreshold: 'for this metric the clear threshold must be at or above the threshold' } },
  { why: 'a negative dark rate', metric: 'dark_high', threshold: -1, clearThreshold: -2, errors: { threshold: 'a dark rate is never below 0 counts/s', clearThreshold: 'a dark rate is never below 0 counts/s' } },
  // Visibility
  { why: 'visibility above 1', metric: 'visibility_low', threshold: 1.5, clearThreshold: 1.6, errors: { threshold: 'visibility lies between 0 and 1', clearThreshold: 'visibility lies between 0 and 1' } },
  { why: 'a negative visibility', metric: 'visibility_low', threshold: -0.1, clearThreshold: 0.5, errors: { threshold: 'visibility lies between 0 and 1' } },
  {
    why: 'clearing above a visibility of 1 never happens',
    metric: 'visibility_low',
    threshold: 0.8,
    clearThreshold: 1,
    errors: { clearThreshold: 'must be below 1: the alarm clears once visibility rises above this, and it is never above 1' },
  },
  {
    why: 'a visibility floor at 0 never raises',
    metric: 'visibility_low',
    threshold: 0,
    clearThreshold: 0.5,
    errors: { threshold: 'must be above 0: the alarm raises once visibility falls below this, and it is never below 0' },
  },
  { why: 'visibility clearing under its threshold', metric: 'visibility_low', threshold: 0.8, clearThreshold: 0.7, errors: { clearThreshold: 'for this metric the clear threshold must be at or above the threshold' } },
  // Phase drift, silence, rejections
  { why: 'a negative drift', metric: 'phase_drift', threshold: -0.1, clearThreshold: -0.2, errors: { threshold: 'the phase drift is never below 0 rad/s', clearThreshold: 'the phase drift is never below 0 rad/s' } },
  {
    why: 'a drift clearing below 0',
    metric: 'phase_drift',
    threshold: 0.1,
    clearThreshold: 0,
    errors: { clearThreshold: 'must be above 0 rad/s: the alarm clears once the phase drift falls below this, and it is never below 0 rad/s' },
  },
  { why: 'a drift rule clearing above its threshold', metric: 'phase_drift', threshold: 0.1, clearThreshold: 0.2, errors: { clearThreshold: 'for this metric the clear threshold must be at or below the threshold' } },
  { why: 'a negative silence', metric: 'gateway_silent', threshold: -5, clearThreshold: -10, errors: { threshold: 'a gateway’s silence is never below 0 s', clearThreshold: 'a gateway’s silence is never below 0 s' } },
  {
    why: 'silence clearing below 0 s',
    metric: 'gateway_silent',
    threshold: 30,
    clearThreshold: 0,
    errors: { clearThreshold: 'must be above 0 s: the alarm clears once a gateway’s silence falls below this, and it is never below 0 s' },
  },
  {
    why: 'a negative count of rejections',
    metric: 'rejected_batches',
    threshold: -1,
    clearThreshold: -1,
    errors: { threshold: 'the count of rejected batches is never below 0 batches/min', clearThreshold: 'the count of rejected batches is never below 0 batches/min' },
  },
  {
    why: 'rejections clearing below 0',
    metric: 'rejected_batches',
    threshold: 5,
    clearThreshold: 0,
    errors: { clearThreshold: 'must be above 0 batches/min: the alarm clears once the count of rejected batches falls below this, and it is never below 0 batches/min' },
  },
  // Subjects the bench does not have
  {
    why: 'a channel of no gateway of the bench',
    metric: 'rate_high',
    channel: 'gw-999/zz',
    threshold: 100,
    clearThreshold: 50,
    errors: { channel: `gw-999/zz is not a channel of this bench; its channels are ${GW}/a, ${GW}/b` },
  },
  { why: 'a key its gateway never reported', metric: 'rate_high', channel: `${GW}/zz`, threshold: 100, clearThreshold: 50, errors: { channel: `${GW}/zz is not a channel of this bench; its channels are ${GW}/a, ${GW}/b` } },
  {
    why: 'a channel of an imported recording',
    metric: 'rate_low',
    channel: `${IMPORTED}/a`,
    threshold: 10,
    clearThreshold: 20,
    errors: { channel: `${IMPORTED} holds an imported recording, which gets no new counts: a rule on it could never raise` },
  },
  { why: 'a gateway of no bench', metric: 'gateway_silent', channel: 'gw-999', threshold: 30, clearThreshold: 10, errors: { channel: `gw-999 is not a gateway of this bench; its gateways are ${GW}` } },
  { why: 'a channel where a gateway is meant', metric: 'rejected_batches', channel: `${GW}/a`, threshold: 5, clearThreshold: 1, errors: { channel: 'give a gateway id, or leave empty for all gateways' } },
  { why: 'a channel on a bench-wide metric', metric: 'visibility_low', channel: `${GW}/a`, threshold: 0.8, clearThreshold: 0.85, errors: { channel: 'this metric is bench-wide: leave the channel empty' } },
];

const formOf = (c: Case, name: string) => ({
  intent: 'create',
  benchId: BENCH,
  name,
  metric: c.metric,
  channel: c.channel ?? '',
  threshold: String(c.threshold),
  clearThreshold: String(c.clearThreshold),
  holdSeconds: '0',
  severity: 'warning',
  recipients: '',
  enabled: 'on',
});

const bodyOf = (c: Case, name: string) => ({ name, metric: c.metric, channel: c.channel ?? null, threshold: c.threshold, clearThreshold: c.clearThreshold });

describe('rules that could never work', () => {
  it.each(cases)('the form refuses $why ($metric $threshold / $clearThreshold), each reason under its box, and stores nothing', async (c) => {
    const before = await stored();
    const res = await admin.postForm('/admin/alarms', formOf(c, `Refused ${c.why}`));
    expect(res.status).toBe(422);
    const p = `${BENCH}-0`;
    for (const field of Object.keys(boxId) as Field[]) {
      const id = `${boxId[field]}-${p}`;
      expect(decode(fieldError(res.text, id)), field).toBe(c.errors[field] ?? null);
      expect(markedInvalid(res.text, id), field).toBe(c.errors[field] !== undefined);
    }
    expect(await stored()).toEqual(before);
  });

  it.each(cases)('the API refuses $why with 422 and stores nothing', async (c) => {
    const before = await stored();
    const res = await api('POST', `/api/v1/benches/${BENCH}/alarms/rules`, bodyOf(c, `Refused ${c.why}`));
    expect(res.status).toBe(422);
    const { error } = (await res.json()) as { error: string };
    expect(Object.values(c.errors).some((m) => error.includes(m))).toBe(true);
    expect(await stored()).toEqual(before);
  });

  it('refuses the same on a change to a rule, by the form and the API, leaving the rule as it was', async () => {
    const created = await api('POST', `/api/v1/benches/${BENCH}/alarms/rules`, { name: 'Dim B', metric: 'rate_low', channel: `${GW}/b`, threshold: 100, clearThreshold: 200 });
    expect(created.status).toBe(201);
    const rule = (await created.json()) as { id: number };
    const [kept] = await getDb().select().from(alarmRules).where(eq(alarmRules.id, rule.id));
    const before = await stored();
    for (const c of cases) {
      const put = await api('PUT', `/api/v1/benches/${BENCH}/alarms/rules/${rule.id}`, bodyOf(c, 'Dim B'));
      expect(put.status, c.why).toBe(422);
      const form = await admin.postForm('/admin/alarms', { ...formOf(c, 'Dim B'), intent: 'update', ruleId: String(rule.id) });
      expect(form.status, c.why).toBe(422);
      const p = `${BENCH}-${rule.id}`;
      for (const [field, message] of Object.entries(c.errors)) expect(decode(fieldError(form.text, `${boxId[field as Field]}-${p}`)), c.why).toBe(message);
    }
    expect(await getDb().select().from(alarmRules).where(eq(alarmRules.id, rule.id))).toEqual([kept]);
    expect(await stored()).toEqual(before);
  });

  it('takes sound rules, at the edges that still work', async () => {
    const sound = [
      { name: 'A overexposure', metric: 'rate_high', channel: `${GW}/a`, threshold: 1e6, clearThreshold: 8e5 },
      { name: 'Barely any light', metric: 'rate_low', channel: null, threshold: 1, clearThreshold: 1 },
      { name: 'Washed out', metric: 'visibility_low', channel: null, threshold: 0.8, clearThreshold: 0.85 },
      { name: 'Any drift at all', metric: 'phase_drift', channel: null, threshold: 0.01, clearThreshold: 0.01 },
      { name: 'Silent gateway', metric: 'gateway_silent', channel: GW, threshold: 30, clearThreshold: 5 },
      // Raises on the first rejected batch, clears once a minute passes without one.
      { name: 'Any rejection', metric: 'rejected_batches', channel: null, threshold: 0.5, clearThreshold: 0.5 },
    ];
    for (const body of sound) {
      const res = await api('POST', `/api/v1/benches/${BENCH}/alarms/rules`, body);
      expect(res.status, `${body.name}: ${await res.clone().text()}`).toBe(201);
    }
  });
});

describe('rule names', () => {
  const rule = { intent: 'create', benchId: BENCH, name: 'B overexposure', metric: 'rate_high', channel: `${GW}/b`, threshold: '2e6', clearThreshold: '1.5e6', holdSeconds: '0', severity: 'critical', recipients: '', enabled: 'on' };
  const named = async (bench: string, name: string) => await getDb().select().from(alarmRules).where(and(eq(alarmRules.benchId, bench), eq(alarmRules.name, name)));

  it('refuses a second rule of the same name on a bench, in any letter case, under the name box', async () => {
    expect((await admin.postForm('/admin/alarms', rule)).status).toBe(200);
    const before = await stored();
    for (const name of ['B overexposure', 'b OVEREXPOSURE', '  B overexposure  ']) {
      const res = await admin.postForm('/admin/alarms', { ...rule, name });
      expect(res.status, name).toBe(409);
      const id = `name-${BENCH}-0`;
      // Named as the bench spells it, whatever was typed.
      expect(decode(fieldError(res.text, id))).toBe('this bench already has a rule named “B overexposure”');
      expect(markedInvalid(res.text, id)).toBe(true);
      expect(res.text).toContain('Name: this bench already has a rule named “B overexposure”');
      expect(res.text).toContain(`value="${name}"`);
    }
    const api409 = await api('POST', `/api/v1/benches/${BENCH}/alarms/rules`, { name: 'B Overexposure', metric: 'rate_high', threshold: 10, clearThreshold: 5 });
    expect(api409.status).toBe(409);
    expect(((await api409.json()) as { error: string }).error).toBe('this bench already has a rule named “B overexposure”');
    expect(await stored()).toEqual(before);
    expect(await named(BENCH, 'B overexposure')).toHaveLength(1);
  });

  it('lets another bench use the name, and a rule keep its own', async () => {
    const other = await api('POST', `/api/v1/benches/${OTHER}/alarms/rules`, { name: 'B overexposure', metric: 'visibility_low', threshold: 0.5, clearThreshold: 0.6 });
    expect(other.status).toBe(201);
    const [mine] = await named(BENCH, 'B overexposure');
    const saved = await admin.postForm('/admin/alarms', { ...rule, intent: 'update', ruleId: String(mine!.id), threshold: '3e6' });
    expect(saved.status).toBe(200);
    expect((await named(BENCH, 'B overexposure'))[0]!.threshold).toBe(3e6);
  });

  it('refuses renaming a rule to a name the bench uses, by the form and the API', async () => {
    const created = await api('POST', `/api/v1/benches/${BENCH}/alarms/rules`, { name: 'A overexposure, spare', metric: 'rate_high', threshold: 10, clearThreshold: 5 });
    const { id } = (await created.json()) as { id: number };
    const form = await admin.postForm('/admin/alarms', { ...rule, intent: 'update', ruleId: String(id), name: 'B OVEREXPOSURE' });
    expect(form.status).toBe(409);
    expect(decode(fieldError(form.text, `name-${BENCH}-${id}`))).toBe('this bench already has a rule named “B overexposure”');
    const put = await api('PUT', `/api/v1/benches/${BENCH}/alarms/rules/${id}`, { name: 'B overexposure', metric: 'rate_high', threshold: 10, clearThreshold: 5 });
    expect(put.status).toBe(409);
    expect((await getDb().select().from(alarmRules).where(eq(alarmRules.id, id)))[0]!.name).toBe('A overexposure, spare');
  });
});
