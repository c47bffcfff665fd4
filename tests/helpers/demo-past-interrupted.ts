// Child process of tests/integration/demo-past.test.ts: writes the demo's recorded past into the
// database DATABASE_URL names and, once the first bench's bins are written and its fits are asked
// for, tells the parent how many rows its transaction holds and waits there, to be killed: a first
// start cut short by a crash or Ctrl-C between a bench's bins and its runs.
import { seedDemoPast } from '../../src/lib/server/seed-past.ts';

await seedDemoPast({
  analysis: {
    fitStored: async (_bench, gateway, _from, _to, within) => {
      const { rows } = await within!.client.query<{ n: number }>('select count(*)::int as n from count_batches where gateway_id = $1', [gateway]);
      process.send!({ gateway, rows: rows[0]!.n });
      return await new Promise<number>(() => undefined);
    },
  },
});
