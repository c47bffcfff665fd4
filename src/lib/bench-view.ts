// What the bench pages hand their islands: plain serialisable data (no server types), loaded once
// per page by src/lib/server/bench-view.ts.
import type { GatewayPresence } from './client/gateway-presence.ts';
import type { RunView } from './runs.ts';

export type ChannelRole = 'out_a' | 'out_b' | 'herald' | 'aux';

export interface ViewChannel {
  /** "<gateway>/<key>", as count messages and the counts API name it */
  id: string;
  gateway: string;
  key: string;
  label: string;
  role: ChannelRole;
  /** Dark rate (counts/s) and dead time (ns) from the admin's calibration; null when unset. */
  darkRate: number | null;
  deadTimeNs: number | null;
}

export interface BenchViewData {
  id: string;
  name: string;
  wavelengthNm: number;
  /** Admin-set drive limits: volts, largest step (V), shortest dwell (ms). */
  drive: { min: number; max: number; maxStep: number; minDwellMs: number };
  channels: ViewChannel[];
  /** Channel ids of the two outputs and the herald, when the bench has them. */
  outA: string | null;
  outB: string | null;
  herald: string | null;
  /** `scan`: the range the gateway's drive reports it can reach (its last status), null when unreported. */
  gateways: (GatewayPresence & { lastSeenMs: number | null; scan: { min: number; max: number; unit: string } | null })[];
  /** Lowest acceptable visibility from the enabled visibility alarm rules; null without one. */
  visibilityLimit: number | null;
  activeRun: RunView | null;
}

export interface ViewerData {
  role: 'admin' | 'operator' | 'observer';
  canOperate: boolean;
}
