// The alarm, retention and export/import pages render for the right roles, and the rule form writes
// an audited rule.
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getDb } from '../../src/lib/server/db/index.ts';
import { insertRaised } from '../../src/lib/server/alarms/event-store.ts';
import { alarmRules } from '../../src/lib/server/db/schema.ts';
import { createBench } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `pg-${tag}`;
let app: RunningApp;
let admin: string;
let op: string;

const page = (token: string, path: string, form?: Record<string, string>) =>
  fetch(new URL(path, app.url), {
    method: form ? 'POST' : 'GET',
    headers: { authorization: `Bearer ${token}`, ...(form ? { 'content-type': 'application/x-www-form-urlencoded', origin: app.url } : {}) },
    ...(form ? { body: new URLSearchParams(form).toString() } : {}),
  });

beforeAll(async () => {
  app = await startWebApp();
  admin = (await userWithToken('admin', 'pages-admin')).token;
  op = (await userWithToken('operator', 'pages-op')).token;
  await createBench({ id: BENCH, name: `Pages bench ${tag}`, wavelengthNm: 780 });
});
afterAll(async () => app?.close());

describe('alarm and data pages', () => {
  it('admin pages render for admins only', async () => {
    for (const path of ['/admin/alarms', '/admin/retention']) {
      const res = await page(admin, path);
      expect(res.status, path).toBe(200);
      expect(await res.text()).toContain(path === '/admin/alarms' ? `Pages bench ${tag}` : 'Storage used');
      expect((await page(op, path)).status, path).toBe(403);
    }
    expect((await page(op, '/')).status).toBe(200);
    const imp = await page(op, `/benches/${BENCH}/import`);
    expect(imp.status).toBe(200);
    expect(await imp.text()).toContain('Import a recording');
  });

  it('the rule form adds a rule and shows its audit', async () => {
    const res = await page(admin, '/admin/alarms', {
      intent: 'create',
      benchId: BENCH,
      name: 'Night overexposure',
      metric: 'rate_high',
      channel: '',
      threshold: '2e6',
      clearThreshold: '1.5e6',
      holdSeconds: '0.5',
      severity: 'critical',
      recipients: 'night@lab.example\nlead@lab.example',
      enabled: 'on',
    });
    const html = await res.text();
    expect(res.status).toBe(200);
    expect(html).toContain('Night overexposure');
    const [rule] = await getDb().select().from(alarmRules).where(eq(alarmRules.benchId, BENCH));
    expect(rule).toMatchObject({ threshold: 2e6, clearThreshold: 1.5e6, holdSeconds: 0.5, severity: 'critical', recipients: ['night@lab.example', 'lead@lab.example'], channel: null });
    const bad = await page(admin, '/admin/alarms', { intent: 'create', benchId: BENCH, name: 'Wrong way', metric: 'rate_high', threshold: '10', clearThreshold: '20', severity: 'info' });
    expect(bad.status).toBe(422);
    expect(await bad.text()).toContain('clear threshold must be at or below');
  });

  it('deleting a rule asks first, deletes only once confirmed, and keeps its alarms, marked', async () => {
    const [rule] = await getDb().select().from(alarmRules).where(eq(alarmRules.benchId, BENCH));
    await insertRaised({ ruleId: rule!.id, ruleName: rule!.name, metric: rule!.metric, benchId: BENCH, subject: 'gw/a', severity: 'critical', message: 'gw/a: rate 2.5 Mc/s', value: 2.5e6, at: Date.now() - 60_000 });
    const fields = { intent: 'delete', benchId: BENCH, ruleId: String(rule!.id) };
    const asked = await page(admin, '/admin/alarms', fields);
    expect(asked.status).toBe(200);
    const html = await asked.text();
    expect(html).toContain('Delete the rule “Night overexposure”?');
    expect(html).toContain('alarms it raised are kept');
    expect(await getDb().select().from(alarmRules).where(eq(alarmRules.id, rule!.id))).toHaveLength(1);
    // Anything but the confirm button's own value asks again.
    expect(await (await page(admin, '/admin/alarms', { ...fields, confirmed: 'true' })).text()).toContain('Delete the rule “Night overexposure”?');
    const done = await page(admin, '/admin/alarms', { ...fields, confirmed: 'yes' });
    expect(await done.text()).toContain('Rule deleted.');
    expect(await getDb().select().from(alarmRules).where(eq(alarmRules.id, rule!.id))).toEqual([]);
    const bench = await (await page(op, `/benches/${BENCH}`)).text();
    expect(bench).toContain('Night overexposure');
    expect(bench).toContain('(deleted rule)');
  });
});
