// The admin's work over real HTTP: inviting someone (the e-mail arrives at the local catcher and
// its link sets a password once), roles, deactivation, reset links, benches, drive limits,
// channels and gateway tokens, each leaving an audit row.
import { and, desc, eq, sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { getDb } from '../../src/lib/server/db/index.ts';
import { auditLog, benches, caughtMail, channels, gateways, users } from '../../src/lib/server/db/schema.ts';
import { createOneTimeLink } from '../../src/lib/server/one-time-links.ts';
import { verifyGatewayToken } from '../../src/lib/server/provisioning.ts';
import { importCounts } from '../../src/lib/server/export/import.ts';
import { getRetention } from '../../src/lib/server/retention.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { HttpClient, inputValue } from '../helpers/http-client.ts';
import { resetSignInLimits, startWebApp, uniqueEmail, userWithToken } from '../helpers/web-app.ts';

let app: RunningApp;
let admin: HttpClient;
let adminId: string;
// Everything the server logs while these tests run, and every secret they handle: none may meet.
const logged: string[] = [];
const secrets: string[] = [];
beforeAll(async () => {
  for (const level of ['log', 'info', 'warn', 'error', 'debug'] as const) {
    const original = console[level].bind(console);
    vi.spyOn(console, level).mockImplementation((...args: unknown[]) => {
      logged.push(args.map((a) => (a instanceof Error ? `${a.message} ${a.stack}` : typeof a === 'string' ? a : JSON.stringify(a))).join(' '));
      original(...args);
    });
  }
  app = await startWebApp();
  resetSignInLimits();
  const a = await userWithToken('admin', 'pages-admin');
  adminId = a.id;
  admin = new HttpClient(app.url);
  expect((await admin.signIn(a.email, a.password)).status).toBe(303);
});
afterAll(async () => {
  await app?.close();
});

async function mailTo(email: string, timeoutMs = 10_000): Promise<{ id: number; subject: string; text: string }> {
  const until = Date.now() + timeoutMs;
  for (;;) {
    const [row] = await getDb()
      .select({ id: caughtMail.id, subject: caughtMail.subject, text: caughtMail.text })
      .from(caughtMail)
      .where(sql`${email} = any(${caughtMail.to})`)
      .orderBy(desc(caughtMail.id))
      .limit(1);
    if (row) return row;
    if (Date.now() > until) throw new Error(`no mail to ${email} arrived`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

async function userId(email: string): Promise<string> {
  const [row] = await getDb().select({ id: users.id }).from(users).where(eq(users.email, email));
  return row!.id;
}

async function audits(entity: string, entityId: string) {
  return await getDb().select().from(auditLog).where(and(eq(auditLog.entity, entity), eq(auditLog.entityId, entityId))).orderBy(auditLog.id);
}

describe('invitations', () => {
  it('e-mails a one-time link that sets a password once and signs the invitee in', async () => {
    const email = uniqueEmail('invitee');
    const res = await admin.postForm('/admin/users', { intent: 'invite', email, name: 'Ada Invitee', role: 'operator' });
    expect(res.status).toBe(200);
    expect(res.text).toContain(`Invitation sent to ${email}`);

    const mail = await mailTo(email);
    expect(mail.subject).toContain('invited');
    const link = /https?:\/\/\S+\/welcome\/[A-Za-z0-9_-]+/.exec(mail.text)?.[0];
    expect(link).toBeTruthy();
    const path = new URL(link!).pathname;
    secrets.push(path.split('/').at(-1)!, 'first-password-1');

    // The admin reads the same message on the outbox page.
    const outbox = await admin.get('/admin/outbox');
    expect(outbox.text).toContain(email);
    expect(outbox.text).toMatch(new RegExp(`Mail is kept for <span[^>]*>${(await getRetention()).mailDays} days</span>, then deleted`));
    const shown = await admin.get(`/admin/outbox/${mail.id}`);
    expect(shown.status).toBe(200);
    expect(shown.text).toContain(path);

    const invitee = new HttpClient(app.url);
    const form = await invitee.get(path);
    expect(form.status).toBe(200);
    expect(form.text).toContain(email);
    const mismatch = await invitee.postForm(path, { password: 'first-password-1', confirm: 'other-password-1' });
    expect(mismatch.status).toBe(422);
    const short = await invitee.postForm(path, { password: 'short', confirm: 'short' });
    expect(short.status).toBe(422);
    const set = await invitee.postForm(path, { password: 'first-password-1', confirm: 'first-password-1' });
    expect(set.status).toBe(303);
    expect(invitee.cookies.has('fw_session')).toBe(true);
    expect((await invitee.get('/account')).text).toContain('operator');

    const again = await new HttpClient(app.url).postForm(path, { password: 'second-password-2', confirm: 'second-password-2' });
    expect(again.status).toBe(410);
    expect(again.text).toContain('already been used');
    expect((await new HttpClient(app.url).get(path)).text).toContain('already been used');
    resetSignInLimits();
    expect((await new HttpClient(app.url).signIn(email, 'first-password-1')).status).toBe(303);
    expect((await new HttpClient(app.url).signIn(email, 'second-password-2')).status).toBe(401);

    expect((await audits('user', await userId(email))).map((r) => r.action)).toContain('invite');
  });

  it('refuses to invite an address that already has an account', async () => {
    const u = await userWithToken('observer');
    const res = await admin.postForm('/admin/users', { intent: 'invite', email: u.email, role: 'observer' });
    expect(res.status).toBe(409);
    expect(res.text).toContain('already has an account');
  });

  it('says so when a link has expired or was never issued', async () => {
    const u = await userWithToken('observer');
    const { token } = await createOneTimeLink(u.id, 'reset', new Date(Date.now() - 3 * 3600_000));
    const expired = await new HttpClient(app.url).get(`/welcome/${token}`);
    expect(expired.status).toBe(410);
    expect(expired.text).toContain('expired');
    const post = await new HttpClient(app.url).postForm(`/welcome/${token}`, { password: 'a-password-123', confirm: 'a-password-123' });
    expect(post.status).toBe(410);
    const unknown = await new HttpClient(app.url).get('/welcome/not-a-real-token');
    expect(unknown.status).toBe(410);
    expect(unknown.text).toContain('not valid');
  });

  it('sends a reset link that works for 2 hours, and it replaces the password', async () => {
    const u = await userWithToken('observer');
    const res = await admin.postForm('/admin/users', { intent: 'reset', userId: u.id });
    expect(res.text).toContain('password-reset link');
    const mail = await mailTo(u.email);
    expect(mail.text).toContain('2 hours');
    const path = new URL(/https?:\/\/\S+\/welcome\/[A-Za-z0-9_-]+/.exec(mail.text)![0]).pathname;
    secrets.push(path.split('/').at(-1)!, 'reset-password-9');
    const c = new HttpClient(app.url);
    expect((await c.get(path)).text).toContain('Set a new password');
    expect((await c.postForm(path, { password: 'reset-password-9', confirm: 'reset-password-9' })).status).toBe(303);
    resetSignInLimits();
    expect((await new HttpClient(app.url).signIn(u.email, 'reset-password-9')).status).toBe(303);
  });
});

describe('people', () => {
  it('changes a role and records before and after', async () => {
    const u = await userWithToken('observer');
    const res = await admin.postForm('/admin/users', { intent: 'role', userId: u.id, role: 'operator' });
    expect(res.text).toContain('is now operator');
    const [row] = await audits('user', u.id);
    expect(row).toMatchObject({ actorId: adminId, action: 'change_role', before: { role: 'observer' }, after: { role: 'operator' } });
    expect(JSON.stringify(row)).not.toMatch(/argon2|password/i);
  });

  it('deactivation ends the person’s sessions and tokens; reactivation lets them back in', async () => {
    resetSignInLimits();
    const u = await userWithToken('operator');
    const c = new HttpClient(app.url);
    await c.signIn(u.email, u.password);
    expect((await c.get('/')).status).toBe(200);
    // Asked first: the post without the confirmation changes nothing and says what would happen.
    const asked = await admin.postForm('/admin/users', { intent: 'deactivate', userId: u.id });
    expect(asked.status).toBe(200);
    expect(asked.text).toContain(`Deactivate ${u.email}?`);
    expect(asked.text).toContain('signed out everywhere at once');
    expect(asked.text).toMatch(/<input type="hidden" name="confirmed" value="yes"/);
    expect((await c.get('/')).status).toBe(200);
    await admin.postForm('/admin/users', { intent: 'deactivate', userId: u.id, confirmed: 'yes' });
    expect((await c.get('/')).status).toBe(302);
    expect((await fetch(new URL('/api/v1/benches', app.url), { headers: { authorization: `Bearer ${u.token}` } })).status).toBe(401);
    expect((await new HttpClient(app.url).signIn(u.email, u.password)).status).toBe(401);
    await admin.postForm('/admin/users', { intent: 'reactivate', userId: u.id });
    expect((await new HttpClient(app.url).signIn(u.email, u.password)).status).toBe(303);
    expect((await audits('user', u.id)).map((r) => r.action)).toEqual(['deactivate', 'reactivate']);
  });
});

describe('benches and gateways', () => {
  const id = `tb-${process.pid}`;

  it('creates a bench, edits it and its drive limits, refusing limits that make no sense', async () => {
    const created = await admin.postForm('/admin/benches', { id, name: 'Test bench', wavelengthNm: '780', description: 'for tests' });
    expect(created.status).toBe(303);
    expect(created.location).toBe(`/admin/benches/${id}?created=1`);
    const dup = await admin.postForm('/admin/benches', { id, name: 'Again', wavelengthNm: '780' });
    expect(dup.status).toBe(409);

    const page = await admin.get(`/admin/benches/${id}`);
    expect(page.text).toContain('Laser safety');
    expect(page.text).toContain('780 nm');

    const details = await admin.postForm(`/admin/benches/${id}`, { intent: 'details', name: 'Renamed bench', wavelengthNm: '785', description: 'x', pathFactor: '1.414' });
    expect(details.status).toBe(200);
    const bad = await admin.postForm(`/admin/benches/${id}`, { intent: 'limits', driveMin: '50', driveMax: '10', driveMaxStep: '1', driveMinDwellMs: '5' });
    expect(bad.status).toBe(422);
    expect(bad.text).toContain('lowest drive must be below the highest');
    const ok = await admin.postForm(`/admin/benches/${id}`, { intent: 'limits', driveMin: '0', driveMax: '60', driveMaxStep: '0.5', driveMinDwellMs: '5' });
    expect(ok.status).toBe(200);

    const [row] = await getDb().select().from(benches).where(eq(benches.id, id));
    expect(row).toMatchObject({ name: 'Renamed bench', wavelengthNm: 785, pathFactor: 1.414, driveMin: 0, driveMax: 60, driveMaxStep: 0.5, driveMinDwellMs: 5 });
    const log = await audits('bench', id);
    expect(log.map((r) => r.action)).toEqual(['create', 'update', 'update_drive_limits']);
    expect(log[2]).toMatchObject({ before: { driveMax: 100 }, after: { driveMax: 60 } });
  });

  it('provisions a gateway with a token shown once, rotates it and revokes it', async () => {
    const gw = `tgw-${process.pid}`;
    const added = await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-add', gatewayId: gw });
    const first = inputValue(added.text, 'gw-token');
    expect(first).toMatch(/^fwg_/);
    expect(await verifyGatewayToken(gw, first!)).toEqual({ benchId: id });
    expect((await admin.get(`/admin/benches/${id}`)).text).not.toContain(first!);

    // Both drop the gateway at once: asked first, and nothing changes until confirmed.
    const askRotate = await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-rotate', gatewayId: gw });
    expect(askRotate.text).toContain(`Rotate the token of ${gw}?`);
    expect(inputValue(askRotate.text, 'gw-token')).toBeNull();
    expect(await verifyGatewayToken(gw, first!)).toEqual({ benchId: id });
    const rotated = await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-rotate', gatewayId: gw, confirmed: 'yes' });
    const second = inputValue(rotated.text, 'gw-token');
    expect(second).toMatch(/^fwg_/);
    secrets.push(first!, second!);
    expect(await verifyGatewayToken(gw, first!)).toBeNull();
    expect(await verifyGatewayToken(gw, second!)).toEqual({ benchId: id });

    const askRevoke = await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-revoke', gatewayId: gw });
    expect(askRevoke.text).toContain(`Revoke ${gw}?`);
    expect(askRevoke.text).toContain('The gateway is disconnected at once and its token stops working.');
    expect(await verifyGatewayToken(gw, second!)).toEqual({ benchId: id });
    await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-revoke', gatewayId: gw, confirmed: 'yes' });
    expect(await verifyGatewayToken(gw, second!)).toBeNull();
    // A revoked gateway has nothing to lose: its new token is issued at once.
    const reissued = await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-rotate', gatewayId: gw });
    const third = inputValue(reissued.text, 'gw-token');
    expect(third).toMatch(/^fwg_/);
    secrets.push(third!);
    expect((await audits('gateway', gw)).map((r) => r.action)).toEqual(['provision', 'rotate_token', 'revoke', 'rotate_token']);
  });

  it('shows the reach the drive reports, warns when the limits go beyond it, and links each gateway to its health', async () => {
    const gw = `tgw3-${process.pid}`;
    await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-add', gatewayId: gw });
    // The gateways before it were revoked or are this one: it is the one commands go to once it reports its scan range.
    await getDb().delete(gateways).where(and(eq(gateways.benchId, id), sql`${gateways.id} <> ${gw}`));
    await getDb().update(gateways).set({ status: { v: 1, state: 'online', scan: { min: 0, max: 100, unit: 'V' } } }).where(eq(gateways.id, gw));
    const inside = await admin.get(`/admin/benches/${id}`);
    // The limits of the test before (0–60 V) lie inside it.
    expect(inside.text).toContain('data-testid="drive-reach">0–100 V');
    expect(inside.text).not.toContain('limits-beyond-reach');
    expect(inside.text).toContain(`href="/benches/${id}/gateways/${gw}"`);
    const beyond = await admin.postForm(`/admin/benches/${id}`, { intent: 'limits', driveMin: '0', driveMax: '120', driveMaxStep: '0.5', driveMinDwellMs: '5' });
    expect(beyond.status).toBe(200);
    expect(beyond.text).toContain('saved-beyond-reach');
  });

  it('lists imported recordings apart from the gateways: no token, no health page, no channel forms', async () => {
    const bench = `tim-${process.pid}`;
    await admin.postForm('/admin/benches', { id: bench, name: 'Imports', wavelengthNm: '780' });
    await admin.postForm(`/admin/benches/${bench}`, { intent: 'gateway-add', gatewayId: `${bench}-g` });
    const r = await importCounts(bench, new Blob(['t_ms,a,b\n1000,1,2\n1010,3,4\n']).stream(), { title: 'Offline night', userId: null });
    const page = await admin.get(`/admin/benches/${bench}`);
    const section = (h: string) => page.text.slice(page.text.indexOf(`id="${h}"`), page.text.indexOf('</section>', page.text.indexOf(`id="${h}"`)));
    expect(section('gw-h')).toContain(`${bench}-g`);
    expect(section('gw-h')).not.toContain(r.gatewayId);
    expect(section('imp-h')).toContain(`href="/runs/${r.runId}"`);
    expect(section('imp-h')).toContain('Offline night');
    expect(section('ch-h')).not.toContain(r.gatewayId);
    expect((await admin.get(`/benches/${bench}/gateways/${r.gatewayId}`)).status).toBe(404);
    expect((await admin.get(`/api/v1/gateways/${r.gatewayId}/health`)).status).toBe(404);
    const rotate = await admin.postForm(`/admin/benches/${bench}`, { intent: 'gateway-rotate', gatewayId: r.gatewayId });
    expect(rotate.status).toBe(404);
    const [gw] = await getDb().select().from(gateways).where(eq(gateways.id, r.gatewayId));
    expect(gw!.tokenHash).toBeNull();
  });

  it('labels a channel, sets its role and corrections', async () => {
    const gw = `tgw2-${process.pid}`;
    await admin.postForm(`/admin/benches/${id}`, { intent: 'gateway-add', gatewayId: gw });
    // Channels appear when a gateway reports them; here the test plays the gateway's part.
    await getDb().insert(channels).values({ gatewayId: gw, key: 'a', benchId: id });
    const fields = { intent: 'channel', gatewayId: gw, key: 'a', label: 'Output A', role: 'out_a', darkRate: '120', darkRateErr: '4', deadTimeNs: '22', deadTimeModel: 'paralyzable', efficiency: '0.93' };
    const res = await admin.postForm(`/admin/benches/${id}`, fields);
    expect(res.status).toBe(200);
    const [row] = await getDb().select().from(channels).where(and(eq(channels.gatewayId, gw), eq(channels.key, 'a')));
    expect(row).toMatchObject({ label: 'Output A', role: 'out_a', darkRate: 120, darkRateErr: 4, deadTimeNs: 22, deadTimeModel: 'paralyzable', efficiency: 0.93 });
    const bad = await admin.postForm(`/admin/benches/${id}`, { ...fields, darkRate: '-3' });
    expect(bad.status).toBe(422);
    const cleared = await admin.postForm(`/admin/benches/${id}`, { ...fields, role: '', darkRate: '', darkRateErr: '' });
    expect(cleared.status).toBe(200);
    const [after] = await getDb().select().from(channels).where(and(eq(channels.gatewayId, gw), eq(channels.key, 'a')));
    expect(after).toMatchObject({ role: null, darkRate: null, darkRateErr: null });
    expect((await audits('channel', `${gw}/a`)).length).toBe(2);

    const trail = await admin.get('/admin/audit');
    expect(trail.status).toBe(200);
    expect(trail.text).toContain(`${gw}/a`);
    expect(trail.text).toContain('darkRate: 120 → null');
  });
});

describe('logs', () => {
  it('never contain a token, a one-time link or a password handled above', () => {
    expect(secrets.length).toBeGreaterThanOrEqual(6);
    const all = logged.join('\n');
    for (const secret of secrets) expect(all).not.toContain(secret);
  });
});
