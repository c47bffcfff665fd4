// Sign-in, sign-out, throttling, session cookie attributes, personal API tokens and page roles,
// over real HTTP against the app running in this process.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningApp } from '../../src/server/app.ts';
import { HttpClient, inputValue } from '../helpers/http-client.ts';
import { resetSignInLimits, startWebApp, uniqueEmail, userWithToken } from '../helpers/web-app.ts';

let app: RunningApp;
beforeAll(async () => {
  app = await startWebApp();
});
afterAll(async () => {
  await app?.close();
});

const SAME_MESSAGE = 'E-mail or password is not right.';

describe('sign-in', () => {
  it('signs in with the right password and sets a HttpOnly, SameSite=Lax session cookie', async () => {
    resetSignInLimits();
    const u = await userWithToken('observer');
    const c = new HttpClient(app.url);
    expect((await c.get('/')).status).toBe(302);
    const res = await c.signIn(u.email, u.password);
    expect(res.status).toBe(303);
    expect(res.location).toBe('/');
    const cookie = res.headers.getSetCookie().find((l) => l.startsWith('fw_session='));
    expect(cookie).toMatch(/HttpOnly/i);
    expect(cookie).toMatch(/SameSite=Lax/i);
    // Plain http on loopback: Secure would make the browser drop the cookie (behind https it is set).
    expect(cookie).not.toMatch(/Secure/i);
    const home = await c.get('/');
    expect(home.status).toBe(200);
    expect(home.text).toContain('Lab overview');
  });

  it('sends a signed-in user only to a path on this site after sign-in', async () => {
    resetSignInLimits();
    const u = await userWithToken('observer');
    const c = new HttpClient(app.url);
    expect((await c.signIn(u.email, u.password)).status).toBe(303);
    // Browsers take "/\\host" and "/<tab>/host" for "//host".
    for (const next of ['/%5Cevil.example', '//evil.example', '/%09/evil.example', 'https://evil.example/', '/%E2%82%AC']) {
      const res = await c.get(`/signin?next=${next}`);
      expect(res.status, next).toBe(302);
      expect(res.location, next).toBe('/');
    }
    expect((await c.get('/signin?next=%2Fbenches%3Fx%3D1')).location).toBe('/benches?x=1');
  });

  it('answers a wrong password and an unknown account with the same message and status', async () => {
    resetSignInLimits();
    const u = await userWithToken('observer');
    const wrong = await new HttpClient(app.url).signIn(u.email, 'not-the-password');
    const unknown = await new HttpClient(app.url).signIn(uniqueEmail('nobody'), 'not-the-password');
    expect(wrong.status).toBe(401);
    expect(unknown.status).toBe(401);
    expect(wrong.text).toContain(SAME_MESSAGE);
    expect(unknown.text).toContain(SAME_MESSAGE);
    expect(wrong.headers.getSetCookie().some((l) => l.startsWith('fw_session='))).toBe(false);
  });

  it('throttles an account after 5 failed tries, even with the right password next', async () => {
    resetSignInLimits();
    const u = await userWithToken('operator');
    const c = new HttpClient(app.url);
    for (let i = 0; i < 5; i++) expect((await c.signIn(u.email, 'wrong-password-' + i)).status).toBe(401);
    const blocked = await c.signIn(u.email, u.password);
    expect(blocked.status).toBe(429);
    expect(blocked.text).toContain('Too many sign-in attempts');
    resetSignInLimits();
    expect((await c.signIn(u.email, u.password)).status).toBe(303);
  });

  it('counts only failures against an address: a lab signing in often from one address is never locked out', async () => {
    resetSignInLimits();
    const u = await userWithToken('observer');
    const statuses: number[] = [];
    for (let i = 0; i < 25; i++) statuses.push((await new HttpClient(app.url).signIn(u.email, u.password)).status);
    expect(statuses.every((s) => s === 303)).toBe(true);
    resetSignInLimits();
  });

  it('throttles one address across many accounts', async () => {
    resetSignInLimits();
    const c = new HttpClient(app.url);
    const statuses: number[] = [];
    for (let i = 0; i < 21; i++) statuses.push((await c.signIn(uniqueEmail('spray'), 'whatever-password')).status);
    expect(statuses.slice(0, 20).every((s) => s === 401)).toBe(true);
    expect(statuses[20]).toBe(429);
    resetSignInLimits();
  });

  it('signs out: the old session cookie no longer opens pages', async () => {
    resetSignInLimits();
    const u = await userWithToken('observer');
    const c = new HttpClient(app.url);
    await c.signIn(u.email, u.password);
    const stolen = `fw_session=${c.cookies.get('fw_session')}`;
    expect((await c.get('/')).status).toBe(200);
    const out = await c.postForm('/signout', {});
    expect(out.status).toBe(303);
    expect(c.cookies.has('fw_session')).toBe(false);
    expect((await new HttpClient(app.url).get('/', { cookie: stolen })).status).toBe(302);
    expect((await new HttpClient(app.url).get('/api/v1/benches', { cookie: stolen })).status).toBe(401);
  });

  it('refuses a form post from another site', async () => {
    resetSignInLimits();
    const u = await userWithToken('observer');
    const c = new HttpClient(app.url);
    await c.signIn(u.email, u.password);
    const cross = await c.postForm('/account', { intent: 'token-create', label: 'x' }, { origin: 'http://evil.example' });
    expect(cross.status).toBe(403);
  });
});

describe('personal API tokens', () => {
  it('creates a token on the account page, uses it as Bearer, and gets 401 after revoking it', async () => {
    resetSignInLimits();
    const u = await userWithToken('observer');
    const c = new HttpClient(app.url);
    await c.signIn(u.email, u.password);
    const created = await c.postForm('/account', { intent: 'token-create', label: 'notebook' });
    expect(created.status).toBe(200);
    const token = inputValue(created.text, 'new-token');
    expect(token).toMatch(/^fwp_/);
    // Shown once: the next view of the page lists the label, not the token.
    const again = await c.get('/account');
    expect(again.text).toContain('notebook');
    expect(again.text).not.toContain(token!);

    const bearer = { authorization: `Bearer ${token}` };
    const ok = await fetch(new URL('/api/v1/benches', app.url), { headers: bearer });
    expect(ok.status).toBe(200);
    expect(Array.isArray(await ok.json())).toBe(true);

    const id = /name="id" value="([^"]+)"/.exec(again.text.slice(again.text.indexOf('<td>notebook</td>')))?.[1];
    expect(id).toBeTruthy();
    const revoked = await c.postForm('/account', { intent: 'token-revoke', id: id! });
    expect(revoked.text).toContain('Token revoked');
    const after = await fetch(new URL('/api/v1/benches', app.url), { headers: bearer });
    expect(after.status).toBe(401);
    expect(await after.json()).toEqual({ error: expect.any(String) });
  });

  it('rejects garbage and unknown tokens with 401', async () => {
    for (const t of ['nonsense', 'fwp_' + 'A'.repeat(43)]) {
      const res = await fetch(new URL('/api/v1/benches', app.url), { headers: { authorization: `Bearer ${t}` } });
      expect(res.status).toBe(401);
    }
  });
});

describe('account and admin pages', () => {
  it('changes the password with the current one, and refuses a wrong current one', async () => {
    resetSignInLimits();
    const u = await userWithToken('operator');
    const c = new HttpClient(app.url);
    await c.signIn(u.email, u.password);
    const bad = await c.postForm('/account', { intent: 'password', current: 'wrong-one-here', password: 'a-new-password-1', confirm: 'a-new-password-1' });
    expect(bad.status).toBe(422);
    expect(bad.text).toContain('current password is not right');
    const good = await c.postForm('/account', { intent: 'password', current: u.password, password: 'a-new-password-1', confirm: 'a-new-password-1' });
    expect(good.status).toBe(200);
    expect(good.text).toContain('Password changed');
    expect((await new HttpClient(app.url).signIn(u.email, 'a-new-password-1')).status).toBe(303);
  });

  it('shows non-admins a 403 page on admin pages and admins the page', async () => {
    resetSignInLimits();
    const op = await userWithToken('operator');
    const c = new HttpClient(app.url);
    await c.signIn(op.email, op.password);
    for (const path of ['/admin/users', '/admin/benches', '/admin/benches/mz-810', '/admin/outbox']) {
      const res = await c.get(path);
      expect(res.status, path).toBe(403);
      expect(res.text).toContain('This page is for admins');
    }
    const admin = await userWithToken('admin');
    const a = new HttpClient(app.url);
    await a.signIn(admin.email, admin.password);
    for (const path of ['/admin/users', '/admin/benches', '/admin/benches/mz-810', '/admin/outbox']) expect((await a.get(path)).status, path).toBe(200);
  });
});
