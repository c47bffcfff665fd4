// Who may read a bench, live or stored. One module, so the rule can tighten (per-bench membership) in one place.
import type { SessionUser } from '../auth/lucia.ts';
import { getBench, listBenches } from '../benches.ts';

/** For now every active user may read every bench that exists (authenticate() already drops inactive users). */
export async function canReadBench(_user: SessionUser, benchId: string): Promise<boolean> {
  return (await getBench(benchId)) !== null;
}

/** The ids of every bench the user may read, by name, in one query: the same rule as `canReadBench`. */
export async function readableBenchIds(_user: SessionUser): Promise<string[]> {
  return (await listBenches()).map((b) => b.id);
}
