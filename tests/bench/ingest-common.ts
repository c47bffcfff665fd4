// What the ingest benchmark's two processes share: the load's shape, the payload and the IPC messages.
export const GATEWAYS = 20;
export const KEYS = ['a', 'b', 'c', 'd'];
export const BINS = 100;
export const DT_MS = 1; // 1 kHz bins
export const WS_CLIENTS = 200;
/** Saturation and baseline phases last this long each, ms. */
export const BURST_MS = 10_000;
/** Most unacknowledged QoS 1 messages per publisher at saturation. */
export const WINDOW = 64;

function counts(): Record<string, number[]> {
  const ch: Record<string, number[]> = {};
  for (const [k, key] of KEYS.entries()) ch[key] = Array.from({ length: BINS }, (_, i) => 20 + ((i * (k + 3)) % 17));
  return ch;
}

/** A contract batch as JSON from a cached count block: the load generator stays cheap (~1 µs instead of ~20 µs). */
const CH_JSON = JSON.stringify(counts());
export function payload(t0: number, seq: number): string {
  return `{"v":1,"boot":"bench","seq":${seq},"t0":${t0},"dt":${DT_MS},"ch":${CH_JSON}}`;
}

/**
 * Runs `fn` for gateway `i` once per batch period (100 ms), phase-shifted by i/20 of the period:
 * independent benches are not in step, and 20 timers created together would fire in the same
 * tick, turning the steady load into one burst of 20 batches every 100 ms. Returns a stop function.
 */
export function every(i: number, fn: () => void): () => void {
  const period = BINS * DT_MS;
  let timer: NodeJS.Timeout | undefined;
  const start = setTimeout(() => {
    fn();
    timer = setInterval(fn, period);
  }, (i * period) / GATEWAYS);
  return () => {
    clearTimeout(start);
    clearInterval(timer);
  };
}

/** A latency kept to 10 µs, which keeps the realistic phase's answer (a million figures) small over IPC. */
export const sample = (ms: number) => Math.round(ms * 100) / 100;

export type LoadCommand =
  | { cmd: 'bare'; url: string }
  | { cmd: 'realistic'; mqttPort: number; gateways: { id: string; token: string }[]; wsUrl: string; token: string; wsClients: number; ms: number; start: number }
  | { cmd: 'saturate'; ms: number; start: number; seqBase: number[] };

export type LoadReply =
  | { kind: 'ready' }
  | { kind: 'error'; message: string }
  | { kind: 'bare'; acked: number; carried: number; lat: number[] }
  /** Per batch: publish time (high-resolution wall clock, ms), publish → PUBACK, and publish → each browser. */
  | { kind: 'realistic'; batches: { key: string; at: number; pubackMs: number; lat: number[] }[]; seqs: number[]; timedBrowsers: number; arrivalsDropped: number }
  | { kind: 'saturate'; acked: number };
