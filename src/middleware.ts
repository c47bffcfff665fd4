import { defineMiddleware, sequence } from 'astro:middleware';
import { authenticate, bearerToken, readCookie } from './lib/server/auth/authenticate.ts';
import { SESSION_COOKIE } from './lib/server/auth/lucia.ts';
import { hasRole, type Role } from './lib/server/auth/roles.ts';
import { allowedMethods, routePatternOf } from './lib/server/http/api-methods.ts';
import { crossSiteRefused } from './lib/server/http/origin.ts';
import { json, problem } from './lib/server/http/responses.ts';

// Pages anyone may open; every other page needs a signed-in user (API routes check roles themselves).
const PUBLIC_PAGES = [/^\/signin\/?$/, /^\/welcome\/[^/]+\/?$/, /^\/favicon\.svg$/];

const auth = defineMiddleware(async (ctx, next) => {
  const res = await authenticate(ctx.request.headers);
  ctx.locals.user = res.user;
  ctx.locals.authSessionId = res.sessionId;
  ctx.locals.authMethod = res.method;
  if (res.cookie) ctx.cookies.set(res.cookie.name, res.cookie.value, res.cookie.attributes);
  return next();
});

// The API's route modules by Astro's route pattern, loaded when first asked (Astro loads the same ones).
const API_ROUTES = new Map(
  Object.entries(import.meta.glob<Record<string, unknown>>(['./pages/api/**/*.ts', '!./pages/api/**/*.test.ts'])).map(([file, load]) => [routePatternOf(file), load]),
);

// Astro answers a method a route does not export with its HTML 404 page; scripts get JSON. Paths
// no route matches never reach the middleware: src/server/http.ts answers those.
const apiMethods = defineMiddleware(async (ctx, next) => {
  const load = ctx.url.pathname.startsWith('/api/') ? API_ROUTES.get(ctx.routePattern) : undefined;
  if (!load) return next();
  const allowed = allowedMethods(await load());
  const method = ctx.request.method;
  if (method === 'OPTIONS') return new Response(null, { status: 204, headers: { allow: allowed.join(', ') } });
  if (!allowed.includes(method)) return json({ error: `${method} is not served here; use ${allowed.join(', ')}` }, 405, { allow: allowed.join(', ') });
  return next();
});

// Replaces Astro's `security.checkOrigin` (off in astro.config.mjs): that check runs before any
// middleware and refused Bearer-token scripts posting forms or bodies without a JSON content type,
// which the contract says must be served. Runs before `auth` so a refused request costs no lookup.
const sameOrigin = defineMiddleware((ctx, next) => {
  const headers = ctx.request.headers;
  const api = ctx.url.pathname.startsWith('/api/');
  const refused = crossSiteRefused({
    method: ctx.request.method,
    origin: headers.get('origin'),
    ownOrigin: ctx.url.origin,
    bearer: bearerToken(headers.get('authorization')) !== null,
    sessionCookie: readCookie(headers.get('cookie'), SESSION_COOKIE) !== null,
    api,
  });
  if (!refused) return next();
  if (api) return problem(403, 'cross-site request refused: send it from this site, or with an API token');
  return new Response(`Cross-site ${ctx.request.method} request refused`, { status: 403, headers: { 'content-type': 'text/plain; charset=utf-8' } });
});

// Pages that need more than a signed-in observer. Others show a 403 page, not a redirect: the
// person is signed in, just not allowed.
const PAGE_ROLES: [RegExp, Role][] = [[/^\/admin(\/|$)/, 'admin']];

const pagesNeedSignIn = defineMiddleware((ctx, next) => {
  const path = ctx.url.pathname;
  if (path.startsWith('/api/') || PUBLIC_PAGES.some((re) => re.test(path))) return next();
  const user = ctx.locals.user;
  if (!user) return ctx.redirect(`/signin?next=${encodeURIComponent(path + ctx.url.search)}`, 302);
  const needed = PAGE_ROLES.find(([re]) => re.test(path))?.[1];
  if (needed && !hasRole(user.role, needed)) return ctx.rewrite('/forbidden');
  return next();
});

export const onRequest = sequence(apiMethods, sameOrigin, auth, pagesNeedSignIn);
