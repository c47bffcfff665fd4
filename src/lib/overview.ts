// One bench as the lab overview lists it (plain data for the overview island), and how its
// gateways are summed up on its card. Pure.
import type { BenchFigures } from './bench-figures.ts';
import type { GatewayPresence } from './client/gateway-presence.ts';
import type { RunView } from './runs.ts';

export interface OverviewBench {
  id: string;
  name: string;
  wavelengthNm: number;
  description: string;
  /** Its gateways as the page was rendered, oldest first; the island follows them live. */
  gateways: GatewayPresence[];
  /** Gateways that have ever been heard from; 0 on a bench set up today whose gateway is not started yet. */
  gatewaysEverSeen: number;
  openAlarms: number;
  criticalAlarms: number;
  activeRun: RunView | null;
  /** Its live figures as the page was rendered (the status socket brings the next ones); null before its first counts. */
  figures: BenchFigures | null;
}

export interface GatewayBadge {
  text: string;
  /** How the badge reads: only a gateway that has gone away is a fault to point at. */
  tone: 'good' | 'warn' | 'bad' | 'quiet';
  /** "1/2": online out of assigned; omitted where there is nothing to count. */
  count: string | null;
}

/**
 * The card's gateway badge. A bench with no gateway, or whose gateways have never connected, is
 * being set up, not failing: it says so without the red of a gateway that went offline.
 */
export function gatewayBadge(b: { gatewaysOnline: number; gatewaysTotal: number; gatewaysEverSeen: number; gatewaysSilent?: number }): GatewayBadge {
  const count = `${b.gatewaysOnline}/${b.gatewaysTotal}`;
  if (b.gatewaysTotal === 0) return { text: 'no gateway yet', tone: 'quiet', count: null };
  if (b.gatewaysOnline > 0) return { text: 'online', tone: 'good', count };
  // Said to be online but not heard from: maybe a stalled counter, maybe a broker slow to notice.
  if (b.gatewaysSilent) return { text: 'silent', tone: 'warn', count };
  if (b.gatewaysEverSeen === 0) return { text: 'not connected yet', tone: 'quiet', count: null };
  return { text: 'offline', tone: 'bad', count };
}
