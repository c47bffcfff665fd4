import type { APIRoute } from 'astro';
import { invalidateSession } from '../lib/server/auth/lucia.ts';

export const POST = (async ({ locals, cookies, redirect }) => {
  if (locals.authSessionId) {
    const blank = await invalidateSession(locals.authSessionId);
    cookies.set(blank.name, blank.value, blank.attributes);
  }
  return redirect('/signin', 303);
}) satisfies APIRoute;
