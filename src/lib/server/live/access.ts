// Who may watch a bench live. One function, so the rule can tighten (per-bench membership) in one place.
import type { SessionUser } from '../auth/lucia.ts';
import { getBench } from '../benches.ts';

/** For now every active user may read every bench that exists (authenticate() already drops inactive users). */
export async function canReadBench(_user: SessionUser, benchId: string): Promise<boolean> {
  return (await getBench(benchId)) !== null;
}
