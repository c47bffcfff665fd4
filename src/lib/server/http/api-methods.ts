// The methods an API route serves, read from its module's exports as Astro does, so a wrong method
// on a known route is a JSON 405 with `Allow` (RFC 9110 §15.5.6) instead of Astro's HTML 404, and
// OPTIONS names them (§9.3.7). Astro answers HEAD with a route's GET.

const HANDLER_METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE'] as const;

/** The route's methods in a fixed order, HEAD beside GET and OPTIONS always. */
export function allowedMethods(mod: Record<string, unknown>): string[] {
  const served = HANDLER_METHODS.filter((m) => typeof mod[m] === 'function');
  return [...served.flatMap((m) => (m === 'GET' ? ['GET', 'HEAD'] : [m])), 'OPTIONS'];
}

/** `./pages/api/v1/benches/[id]/import/index.ts` → `/api/v1/benches/[id]/import`, Astro's route pattern for that file. */
export function routePatternOf(file: string): string {
  return file.replace(/^\.\/pages/, '').replace(/\.ts$/, '').replace(/\/index$/, '');
}
