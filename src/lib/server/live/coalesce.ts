// Merging of count messages for the WebSocket push: contiguous batches of one gateway become one
// message (one frame instead of several). Only count messages of the same gateway, bin width,
// channel set and optional fields merge; any other message keeps its place and ends merging across
// it, so the order a client sees is kept per gateway and around status, acks and features. Pure.
import type { CountsMessage, FeatureMessage, LiveMessage } from '../../live-messages.ts';

type Message = LiveMessage | FeatureMessage;

/** Largest merged count message, in bins per channel (the contract's batch limit). */
const MAX_MERGED_BINS = 10_000;

export function binsOf(m: CountsMessage): number {
  const first = Object.values(m.ch)[0];
  return first ? first.length : 0;
}

function canMerge(a: CountsMessage, b: CountsMessage): boolean {
  if (a.gateway !== b.gateway || a.dt !== b.dt || !!a.x !== !!b.x || !!a.cc !== !!b.cc) return false;
  if (a.t0 + binsOf(a) * a.dt !== b.t0 || binsOf(a) + binsOf(b) > MAX_MERGED_BINS) return false;
  const ka = Object.keys(a.ch);
  const kb = Object.keys(b.ch);
  // Own keys only: `in` would find "constructor" or "toString" on Object.prototype.
  return ka.length === kb.length && ka.every((k) => Object.hasOwn(b.ch, k));
}

// Channel keys are the gateway's ("__proto__" included): built with Object.fromEntries, whose
// properties are always own data properties, never with `ch[k] = …`.
function merge(a: CountsMessage, b: CountsMessage): CountsMessage {
  const ch: Record<string, number[]> = Object.fromEntries(Object.entries(a.ch).map(([k, v]) => [k, v.concat(b.ch[k]!)]));
  const out: CountsMessage = { ...a, ch };
  if (a.x && b.x) out.x = a.x.concat(b.x);
  if (a.cc && b.cc) out.cc = a.cc.concat(b.cc);
  return out;
}

/**
 * Merges each count message into the latest earlier one of its gateway when they are contiguous,
 * across other gateways' count messages but never across a message of another type.
 * `combine(a, b, merged)` builds the item that replaces `a` (and drops `b`).
 */
export function coalesceCounts<T>(items: T[], msgOf: (item: T) => Message, combine: (a: T, b: T, merged: CountsMessage) => T): T[] {
  if (items.length < 2) return items;
  const out: T[] = [];
  let lastOf = new Map<string, number>(); // gateway → index in `out` of its latest count message
  for (const item of items) {
    const m = msgOf(item);
    if (m.type !== 'counts') {
      out.push(item);
      lastOf = new Map();
      continue;
    }
    const c = m as CountsMessage;
    const at = lastOf.get(c.gateway);
    const prev = at === undefined ? null : (msgOf(out[at]!) as CountsMessage);
    if (prev && canMerge(prev, c)) {
      out[at!] = combine(out[at!]!, item, merge(prev, c));
    } else {
      lastOf.set(c.gateway, out.length);
      out.push(item);
    }
  }
  return out;
}

/** Bins [a, b) of a count message, as a message of their own. */
function binsBetween(m: CountsMessage, a: number, b: number): CountsMessage {
  const ch: Record<string, number[]> = Object.fromEntries(Object.entries(m.ch).map(([k, v]) => [k, v.slice(a, b)]));
  const out: CountsMessage = { ...m, t0: m.t0 + a * m.dt, ch };
  if (m.x) out.x = m.x.slice(a, b);
  if (m.cc) out.cc = m.cc.slice(a, b);
  return out;
}

/**
 * The parts of a count message whose bins start outside `taken` (sorted, non-overlapping [t0, t1)
 * spans, ms): the message itself when none is taken, else one message per run of bins left.
 */
export function countsOutside(m: CountsMessage, taken: readonly (readonly [number, number])[]): CountsMessage[] {
  const n = binsOf(m);
  // First span that ends after the message starts (binary search: a replay can hold thousands).
  let lo = 0;
  let hi = taken.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (taken[mid]![1] <= m.t0) lo = mid + 1;
    else hi = mid;
  }
  const out: CountsMessage[] = [];
  let k = lo;
  let run = -1;
  for (let j = 0; j < n; j++) {
    const t = m.t0 + j * m.dt;
    while (k < taken.length && taken[k]![1] <= t) k++;
    const inside = k < taken.length && taken[k]![0] <= t;
    if (!inside && run < 0) run = j;
    if (inside && run >= 0) {
      out.push(binsBetween(m, run, j));
      run = -1;
    }
  }
  if (run === 0) return [m];
  if (run > 0) out.push(binsBetween(m, run, n));
  return out;
}
