// The demo lab's simulated gateways, run inside the server process by `npm start` (unless
// FRINGEWISE_SIMULATE=0): one sim-driver gateway per demo bench, each with its own queue.
import path from 'node:path';
import { DEMO_BENCHES } from '../simulators/demo-benches.ts';
import { SimCounter } from './drivers/sim.ts';
import { Gateway } from './gateway.ts';

export interface DemoGatewaysOptions {
  /** Broker the gateways sign in to, e.g. mqtt://127.0.0.1:1883. */
  url: string;
  prefix: string;
  /** Plaintext tokens by gateway id; a demo bench without one is not simulated. */
  tokens: Record<string, string>;
  /** Parent of the per-gateway queue directories. */
  queueRoot: string;
}

export interface DemoGateways {
  gateways: Gateway[];
  stop(): Promise<void>;
}

export async function startDemoGateways(opts: DemoGatewaysOptions): Promise<DemoGateways> {
  const gateways: Gateway[] = [];
  for (const bench of DEMO_BENCHES) {
    // Own entries only: a gateway id may be "constructor", which a plain object inherits.
    const token = Object.hasOwn(opts.tokens, bench.gateway) ? opts.tokens[bench.gateway] : undefined;
    if (!token) {
      console.warn(`[demo] no token for ${bench.gateway} (revoked, or seeding is off): bench ${bench.id} is not simulated`);
      continue;
    }
    try {
      gateways.push(
        await Gateway.start({
          id: bench.gateway,
          token,
          url: opts.url,
          prefix: opts.prefix,
          driver: 'sim',
          counter: new SimCounter({ bench }),
          queueDir: path.join(opts.queueRoot, bench.gateway),
        }),
      );
    } catch (err) {
      console.warn(`[demo] ${bench.gateway} did not start: ${err instanceof Error ? err.message : err}`);
    }
  }
  return { gateways, stop: async () => void (await Promise.all(gateways.map((g) => g.stop()))) };
}
