import { defineMiddleware, sequence } from 'astro:middleware';
import { authenticate } from './lib/server/auth/authenticate.ts';
import { hasRole, type Role } from './lib/server/auth/roles.ts';
import { originHost } from './lib/server/http/origin.ts';
import { problem } from './lib/server/http/responses.ts';

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

// Astro's origin check covers form posts only; JSON mutations made with the session cookie must
// come from our own pages too. Bearer-token calls carry no ambient credential and are exempt.
const sameOriginForCookieMutations = defineMiddleware((ctx, next) => {
  const method = ctx.request.method;
  if (ctx.locals.authMethod === 'session' && method !== 'GET' && method !== 'HEAD' && method !== 'OPTIONS') {
    const origin = ctx.request.headers.get('origin');
    const host = ctx.request.headers.get('host');
    if (!origin || !host || originHost(origin) !== host) return problem(403, 'cross-site request refused');
  }
  return next();
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

export const onRequest = sequence(auth, sameOriginForCookieMutations, pagesNeedSignIn);
