// Every API route is built with `endpoint(role, handler)`: the role check cannot be forgotten,
// and tests read `requiredRole` to check each route refuses lower roles.
import type { APIContext, APIRoute } from 'astro';
import type { SessionUser } from '../auth/lucia.ts';
import { hasRole, type Role } from '../auth/roles.ts';
import { errorForLog } from '../log-safe.ts';
import { HttpError, problem } from './responses.ts';

export type Guarded = APIRoute & { requiredRole: Role };
export type AuthedContext = APIContext & { user: SessionUser };

export function endpoint(role: Role, handler: (ctx: AuthedContext) => Promise<Response> | Response): Guarded {
  const route: APIRoute = async (ctx) => {
    const user = ctx.locals.user;
    if (!user) return problem(401, 'sign in or send a valid API token');
    if (!hasRole(user.role, role)) return problem(403, `this needs the ${role} role`);
    try {
      return await handler(Object.assign(ctx, { user }));
    } catch (err) {
      if (err instanceof HttpError) return problem(err.status, err.message);
      console.error('[api]', ctx.request.method, ctx.url.pathname, errorForLog(err));
      return problem(500, 'internal error');
    }
  };
  return Object.assign(route, { requiredRole: role });
}
