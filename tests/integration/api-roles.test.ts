// Every API route states the role it needs and refuses anyone below it. The routes are read from
// src/pages/api, so a new route without `endpoint(role, …)` fails here.
import { readdirSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROLES, type Role } from '../../src/lib/server/auth/roles.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

const API_DIR = path.resolve('src/pages/api');
const METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE', 'ALL'] as const;

function routeFiles(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((e) => {
    const full = path.join(dir, e.name);
    if (e.isDirectory()) return routeFiles(full);
    return /\.(ts|js|mjs)$/.test(e.name) && !/\.test\.ts$/.test(e.name) ? [full] : [];
  });
}

/** File path to a request path: index drops out, [param] and [...rest] get sample values. */
function urlFor(file: string): string {
  const rel = path.relative(path.resolve('src/pages'), file).replace(/\\/g, '/').replace(/\.(ts|js|mjs)$/, '');
  const segs = rel.split('/').filter((s) => s !== 'index');
  return '/' + segs.map((s) => (s.startsWith('[...') ? 'sample' : s.startsWith('[') ? 'mz-810' : s)).join('/');
}

interface Route {
  file: string;
  url: string;
  method: (typeof METHODS)[number];
  role: Role | undefined;
}

const routes: Route[] = [];
for (const file of routeFiles(API_DIR)) {
  const mod = (await import(pathToFileURL(file).href)) as Record<string, unknown>;
  for (const method of METHODS) {
    const handler = mod[method] as { requiredRole?: Role } | undefined;
    if (handler) routes.push({ file: path.relative(process.cwd(), file), url: urlFor(file), method, role: handler.requiredRole });
  }
}

let app: RunningApp;
const tokens = new Map<Role, string>();
beforeAll(async () => {
  app = await startWebApp();
  for (const role of ROLES) tokens.set(role, (await userWithToken(role, `roles-${role}`)).token);
});
afterAll(async () => {
  await app?.close();
});

async function call(r: Route, token?: string): Promise<Response> {
  const method = r.method === 'ALL' ? 'GET' : r.method;
  const headers: Record<string, string> = { accept: 'application/json' };
  if (token) headers['authorization'] = `Bearer ${token}`;
  if (method !== 'GET') headers['content-type'] = 'application/json';
  return await fetch(new URL(r.url, app.url), { method, headers, ...(method !== 'GET' ? { body: '{}' } : {}) });
}

describe('API routes', () => {
  it('exist (the enumeration found the routes)', () => {
    expect(routes.length).toBeGreaterThan(0);
    expect(routes.some((r) => r.url === '/api/v1/benches' && r.method === 'GET')).toBe(true);
  });

  it.each(routes.map((r) => [`${r.method} ${r.file}`, r] as const))('%s is built with endpoint(role, …)', (_name, r) => {
    expect(r.role, `${r.file} exports ${r.method} without a requiredRole: wrap it in endpoint(role, …)`).toBeDefined();
    expect(ROLES).toContain(r.role);
  });

  it.each(routes.map((r) => [`${r.method} ${r.url}`, r] as const))('%s answers 401 without auth and 403 below its role', async (_name, r) => {
    const anonymous = await call(r);
    expect(anonymous.status).toBe(401);
    expect(await anonymous.json()).toEqual({ error: expect.any(String) });

    const below = ROLES.slice(0, ROLES.indexOf(r.role!));
    for (const role of below) {
      const res = await call(r, tokens.get(role));
      expect(res.status, `${role} calling ${r.method} ${r.url}`).toBe(403);
      expect(await res.json()).toEqual({ error: expect.any(String) });
    }
    // The role itself gets past the check (the handler may still refuse the sample input).
    const own = await call(r, tokens.get(r.role!));
    expect([401, 403]).not.toContain(own.status);
  });
});
