// Gateway status (retained; the last will says offline): kept on the gateway row, and the channels
// it announces are created for its bench (contract, "Operations").
import type { GatewayStatus } from '../../contract/wire.ts';
import { getDbHandle } from '../db/index.ts';
import { withDbRetry } from './db-retry.ts';

export async function storeStatus(gatewayId: string, status: GatewayStatus): Promise<void> {
  await withDbRetry('status', async () => {
    const { pool } = getDbHandle();
    await pool.query('update gateways set status = $2::jsonb, last_seen_at = now() where id = $1', [gatewayId, JSON.stringify(status)]);
    if (status.channels?.length) {
      await pool.query(
        `insert into channels (gateway_id, key, bench_id)
         select g.id, k, g.bench_id from gateways g, unnest($2::text[]) as k where g.id = $1
         on conflict do nothing`,
        [gatewayId, status.channels],
      );
    }
  });
}
