// A refused admin form comes back as it was typed, with the reason next to the box it concerns and
// named in the notice by the box's label; nothing is stored. Number boxes refuse a decimal comma
// with what to type instead. Drive limits beyond the drive's reach are saved with a warning.
import { and, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getDb } from '../../src/lib/server/db/index.ts';
import { alarmRules, apiTokens, auditLog, benches, channels, gateways, users } from '../../src/lib/server/db/schema.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import { getRetention } from '../../src/lib/server/retention.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { HttpClient, inputValue } from '../helpers/http-client.ts';
import { resetSignInLimits, startWebApp, userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `af-${tag}`;
const GW = `af-${tag}-gw`;
const DECIMAL_COMMA = 'enter a number with a decimal point, such as 0.8';
let app: RunningApp;
let admin: HttpClient;
let adminId: string;

beforeAll(async () => {
  app = await startWebApp();
  resetSignInLimits();
  const a = await userWithToken('admin', 'forms-admin');
  adminId = a.id;
  admin = new HttpClient(app.url);
  expect((await admin.signIn(a.email, a.password)).status).toBe(303);
  await createBench({ id: BENCH, name: `Forms bench ${tag}`, wavelengthNm: 633 });
  await createGateway(GW, BENCH);
});
afterAll(async () => app?.close());

/** The option shown as chosen in the select with this id. */
function selected(html: string, id: string): string | null {
  const select = new RegExp(`<select[^>]*id="${id}"[^>]*>([\\s\\S]*?)</select>`).exec(html)?.[1] ?? '';
  // Astro writes an empty value as a bare attribute.
  const option = /<option value(?:="([^"]*)")? selected/.exec(select);
  return option ? (option[1] ?? '') : null;
}

/** The error shown under the box with this id (FieldError.astro). */
function fieldError(html: string, id: string): string | null {
  return new RegExp(`<p id="${id}-error"[^>]*>([^<]*)</p>`).exec(html)?.[1] ?? null;
}

const benchAudits = async () => await getDb().select().from(auditLog).where(and(eq(auditLog.entity, 'bench'), eq(auditLog.entityId, BENCH)));

describe('drive limits', () => {
  it('a refused post shows the limits as typed, the reason under the box, and stores nothing', async () => {
    const [before] = await getDb().select().from(benches).where(eq(benches.id, BENCH));
    const step0 = await admin.postForm(`/admin/benches/${BENCH}`, { intent: 'limits', driveMin: '100', driveMax: '10', driveMaxStep: '0', driveMinDwellMs: '5' });
    expect(step0.status).toBe(422);
    expect([inputValue(step0.text, 'driveMin'), inputValue(step0.text, 'driveMax'), inputValue(step0.text, 'driveMaxStep'), inputValue(step0.text, 'driveMinDwellMs')]).toEqual(['100', '10', '0', '5']);
    expect(step0.text).toContain('Largest step (V): largest step must be above 0');
    expect(fieldError(step0.text, 'driveMaxStep')).toBe('largest step must be above 0');
    expect(step0.text).toMatch(/id="driveMaxStep"[^>]*aria-invalid="true"/);

    const reversed = await admin.postForm(`/admin/benches/${BENCH}`, { intent: 'limits', driveMin: '100', driveMax: '10', driveMaxStep: '0.5', driveMinDwellMs: '5' });
    expect(reversed.status).toBe(422);
    expect(inputValue(reversed.text, 'driveMin')).toBe('100');
    expect(inputValue(reversed.text, 'driveMax')).toBe('10');
    expect(inputValue(reversed.text, 'driveMaxStep')).toBe('0.5');
    expect(reversed.text).toContain('Highest drive (V): the lowest drive must be below the highest');
    expect(fieldError(reversed.text, 'driveMax')).toBe('the lowest drive must be below the highest');
    // The other forms of the page still show what is stored.
    expect(inputValue(reversed.text, 'name')).toBe(`Forms bench ${tag}`);

    const comma = await admin.postForm(`/admin/benches/${BENCH}`, { intent: 'limits', driveMin: '0,5', driveMax: '10', driveMaxStep: '0.5', driveMinDwellMs: '5' });
    expect(comma.status).toBe(422);
    expect(comma.text).toContain(`Lowest drive (V): ${DECIMAL_COMMA}`);

    const [after] = await getDb().select().from(benches).where(eq(benches.id, BENCH));
    expect(after).toEqual(before);
    expect(await benchAudits()).toEqual([]);
  });

  it('saves limits beyond the reach the drive reports, and says so naming that reach', async () => {
    await getDb().update(gateways).set({ status: { v: 1, state: 'online', scan: { min: 0, max: 150, unit: 'V' } } }).where(eq(gateways.id, GW));
    const res = await admin.postForm(`/admin/benches/${BENCH}`, { intent: 'limits', driveMin: '-50', driveMax: '500', driveMaxStep: '1', driveMinDwellMs: '5' });
    expect(res.status).toBe(200);
    expect(res.text).toContain('Drive limits saved');
    expect(res.text).toMatch(/data-testid="saved-beyond-reach"[^>]*>[^<]*beyond the 0–150 V that the drive of/);
    const [row] = await getDb().select().from(benches).where(eq(benches.id, BENCH));
    expect(row).toMatchObject({ driveMin: -50, driveMax: 500 });
    // Later visits keep warning beside the form.
    expect((await admin.get(`/admin/benches/${BENCH}`)).text).toContain('limits-beyond-reach');
  });

  it('a refused channel keeps what was typed in its own form only', async () => {
    await getDb().insert(channels).values([{ gatewayId: GW, key: 'a', benchId: BENCH }, { gatewayId: GW, key: 'b', benchId: BENCH }]);
    const res = await admin.postForm(`/admin/benches/${BENCH}`, {
      intent: 'channel', gatewayId: GW, key: 'a', label: 'Output A', role: 'out_a', darkRate: '-3', darkRateErr: '', deadTimeNs: '22', deadTimeModel: 'paralyzable', efficiency: '0,93',
    });
    expect(res.status).toBe(422);
    expect(inputValue(res.text, `label-${GW}-a`)).toBe('Output A');
    expect(inputValue(res.text, `dark-${GW}-a`)).toBe('-3');
    expect(inputValue(res.text, `eff-${GW}-a`)).toBe('0,93');
    expect(selected(res.text, `role-${GW}-a`)).toBe('out_a');
    expect(selected(res.text, `model-${GW}-a`)).toBe('paralyzable');
    expect(fieldError(res.text, `dark-${GW}-a`)).toBe('dark rate cannot be negative');
    expect(fieldError(res.text, `eff-${GW}-a`)).toBe(DECIMAL_COMMA);
    expect(res.text).toContain(`Efficiency: ${DECIMAL_COMMA}`);
    expect(inputValue(res.text, `label-${GW}-b`) ?? '').toBe('');
    expect(selected(res.text, `role-${GW}-b`)).toBe('');
    const [row] = await getDb().select().from(channels).where(and(eq(channels.gatewayId, GW), eq(channels.key, 'a')));
    expect(row).toMatchObject({ label: '', role: null, darkRate: null });
  });

  it('a new bench refused as a duplicate keeps its fields', async () => {
    const res = await admin.postForm('/admin/benches', { id: BENCH, name: 'Second try', wavelengthNm: '780', description: 'typed' });
    expect(res.status).toBe(409);
    expect(inputValue(res.text, 'id')).toBe(BENCH);
    expect(inputValue(res.text, 'name')).toBe('Second try');
    expect(inputValue(res.text, 'wavelengthNm')).toBe('780');
    expect(res.text).toMatch(/<textarea[^>]*id="description"[^>]*>typed<\/textarea>/);
    expect(fieldError(res.text, 'id')).toBe(`bench ${BENCH} already exists`);
    expect(res.text).toContain(`Id: bench ${BENCH} already exists`);
  });
});

describe('retention', () => {
  it('a refused post shows the days as typed and stores nothing', async () => {
    const before = await getRetention();
    const res = await admin.postForm('/admin/retention', { intent: 'save', rawDays: '400', fineDays: '10', coarseDays: '3650', mailDays: '90' });
    expect(res.status).toBe(422);
    expect([inputValue(res.text, 'raw'), inputValue(res.text, 'fine'), inputValue(res.text, 'coarse')]).toEqual(['400', '10', '3650']);
    expect(res.text).toContain('1 s sums (days): keep coarser data at least as long as finer data');
    expect(fieldError(res.text, 'fine')).toMatch(/^keep coarser data/);

    const comma = await admin.postForm('/admin/retention', { intent: 'save', rawDays: '30', fineDays: '180', coarseDays: '3,5', mailDays: '90' });
    expect(comma.status).toBe(422);
    expect(inputValue(comma.text, 'coarse')).toBe('3,5');
    expect(comma.text).toContain(`1 min sums (days): ${DECIMAL_COMMA}`);

    const mail = await admin.postForm('/admin/retention', { intent: 'save', rawDays: '30', fineDays: '180', coarseDays: '3650', mailDays: '0' });
    expect(mail.status).toBe(422);
    expect(inputValue(mail.text, 'mail')).toBe('0');
    expect(fieldError(mail.text, 'mail')).toBe('at least 1 day');
    expect(mail.text).toContain('Sent e-mail (days): at least 1 day');
    const empty = await admin.postForm('/admin/retention', { intent: 'save', rawDays: '30', fineDays: '180', coarseDays: '3650', mailDays: '' });
    expect(empty.status).toBe(422);
    expect(fieldError(empty.text, 'mail')).toBe('enter a number');
    expect(await getRetention()).toEqual(before);
  });
});

describe('people', () => {
  it('a refused invitation keeps the e-mail, name and role, and says what is wrong with the e-mail', async () => {
    const existing = await userWithToken('observer', 'forms-existing');
    const res = await admin.postForm('/admin/users', { intent: 'invite', email: existing.email, name: 'Ada Again', role: 'operator' });
    expect(res.status).toBe(409);
    expect(inputValue(res.text, 'inv-email')).toBe(existing.email);
    expect(inputValue(res.text, 'inv-name')).toBe('Ada Again');
    expect(selected(res.text, 'inv-role')).toBe('operator');
    expect(res.text).toContain(`E-mail: ${existing.email} already has an account`);
    expect(fieldError(res.text, 'inv-email')).toBe(`${existing.email} already has an account`);
    const [row] = await getDb().select().from(users).where(eq(users.email, existing.email));
    expect(row).toMatchObject({ name: '', role: 'observer' });

    const bad = await admin.postForm('/admin/users', { intent: 'invite', email: 'not-an-address', name: 'Bo', role: 'admin' });
    expect(bad.status).toBe(422);
    expect(inputValue(bad.text, 'inv-email')).toBe('not-an-address');
    expect(selected(bad.text, 'inv-role')).toBe('admin');
    expect(bad.text).toContain('E-mail: not a valid e-mail address');
    expect(await getDb().select().from(users).where(eq(users.email, 'not-an-address'))).toEqual([]);
  });
});

describe('bench and gateway ids', () => {
  const RULE_IN_WORDS = 'use 1–40 lower-case letters, digits or hyphens, starting with a letter or digit';

  it('a refused gateway id is said in words under its box, which is marked', async () => {
    for (const gatewayId of ['GW_1', '-gw', 'g'.repeat(41)]) {
      const res = await admin.postForm(`/admin/benches/${BENCH}`, { intent: 'gateway-add', gatewayId });
      expect(res.status, gatewayId).toBe(422);
      expect(fieldError(res.text, 'gatewayId')).toBe(RULE_IN_WORDS);
      expect(res.text).toMatch(/id="gatewayId"[^>]*aria-invalid="true"[^>]*aria-describedby="gatewayId-hint gatewayId-error"/);
      expect(res.text).toContain(`Gateway id: ${RULE_IN_WORDS}`);
      expect(inputValue(res.text, 'gatewayId')).toBe(gatewayId);
      expect(res.text).not.toContain('must match');
      expect(await getDb().select().from(gateways).where(eq(gateways.id, gatewayId))).toEqual([]);
    }
  });

  it('so is a refused bench id', async () => {
    const res = await admin.postForm('/admin/benches', { id: 'Bench 1', name: 'Wrong id', wavelengthNm: '633' });
    expect(res.status).toBe(422);
    expect(fieldError(res.text, 'id')).toBe(RULE_IN_WORDS);
    expect(res.text).toMatch(/id="id"[^>]*aria-invalid="true"/);
    expect(res.text).toContain(`Id: ${RULE_IN_WORDS}`);
    expect(res.text).not.toContain('must match');
  });
});

describe('alarm rules', () => {
  const rule = {
    intent: 'create',
    benchId: BENCH,
    name: 'Low fringe',
    metric: 'visibility_low',
    channel: '',
    threshold: '0,8',
    clearThreshold: '0.85',
    holdSeconds: '30',
    severity: 'critical',
    recipients: 'night@lab.example\nlead@lab.example',
  };

  it('a refused new rule comes back open with every field as typed, the threshold named', async () => {
    const res = await admin.postForm('/admin/alarms', rule);
    expect(res.status).toBe(422);
    const p = `${BENCH}-0`;
    expect(res.text).toContain(`Threshold: ${DECIMAL_COMMA}`);
    expect(fieldError(res.text, `thr-${p}`)).toBe(DECIMAL_COMMA);
    expect(inputValue(res.text, `name-${p}`)).toBe('Low fringe');
    expect(inputValue(res.text, `thr-${p}`)).toBe('0,8');
    expect(inputValue(res.text, `clr-${p}`)).toBe('0.85');
    expect(inputValue(res.text, `hold-${p}`)).toBe('30');
    expect(selected(res.text, `metric-${p}`)).toBe('visibility_low');
    expect(selected(res.text, `sev-${p}`)).toBe('critical');
    expect(res.text).toContain('night@lab.example\nlead@lab.example</textarea>');
    // Its <details> is open, or the typed form would be folded away.
    expect(res.text).toMatch(new RegExp(`<details open[^>]*>\\s*<summary[^>]*>New rule for Forms bench ${tag}`));
    expect(await getDb().select().from(alarmRules).where(eq(alarmRules.benchId, BENCH))).toEqual([]);
  });
});

describe('own account', () => {
  it('a refused token keeps its label; a refused password change names the box and echoes no password', async () => {
    const tokensBefore = await getDb().select().from(apiTokens).where(eq(apiTokens.userId, adminId));
    const label = await admin.postForm('/account', { intent: 'token-create', label: '   ' });
    expect(label.status).toBe(422);
    expect(label.text).toContain('Label: give the token a label');
    expect(fieldError(label.text, 'label')).toBe('give the token a label');
    expect(await getDb().select().from(apiTokens).where(eq(apiTokens.userId, adminId))).toEqual(tokensBefore);

    const pw = await admin.postForm('/account', { intent: 'password', current: 'wrong-password-typed', password: 'new-password-typed', confirm: 'new-password-typed' });
    expect(pw.status).toBe(422);
    expect(pw.text).toContain('Current password: the current password is not right');
    expect(fieldError(pw.text, 'current')).toBe('the current password is not right');
    expect(pw.text).not.toContain('password-typed');
  });
});
