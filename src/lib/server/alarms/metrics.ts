// What each alarm metric measures, pure: turns bus events into (subject, sample) pairs for the
// evaluator. The engine (engine.ts) does the I/O around it.
//
// Definitions (value units in METRIC_INFO):
// - rate_high / rate_low: a channel's mean rate over one stored batch, counts/s = Σcounts / (n·dt/1000).
//   The rule's channel ("<gateway>/<key>") picks one; no channel means every channel of the bench.
// - dark_high: the same rate, but without a channel it watches only the bench's `aux` channels —
//   detectors a lab keeps covered as a dark reference. There is no shutter signal in contract v1,
//   so "dark" is a property of the channel, set by its role.
// - visibility_low: each fitted sweep's visibility (0…1), net of darks where they are calibrated
//   (shownVisibility), the figure the bench page shows beside the alarm limit.
// - phase_drift: |phase drift| at hold, rad/s, from each phase update.
// - gateway_silent: seconds since a gateway last sent anything (counts or status), sampled by a timer.
// - rejected_batches: rejected batches of a gateway in the last REJECT_WINDOW_MS.
import type { CountBatch } from '../../contract/wire.ts';
import { METRIC_INFO, type AlarmMetric } from '../../alarm-messages.ts';
import type { RuleLimits, Sample } from './evaluator.ts';

export interface RuleForMetrics extends RuleLimits {
  id: number;
  benchId: string;
  channel: string | null;
}

export interface SubjectSample {
  subject: string;
  sample: Sample;
}

/** 60 s: "rejected batches per minute" is what the rule's threshold means. */
export const REJECT_WINDOW_MS = 60_000;

const BATCH_METRICS: ReadonlySet<AlarmMetric> = new Set(['rate_high', 'rate_low', 'dark_high']);

export function isBatchMetric(metric: AlarmMetric): boolean {
  return BATCH_METRICS.has(metric);
}

/** Rates of every channel of a batch, counts/s, stamped at the end of the batch's last bin. */
export function batchRates(gatewayId: string, batch: Pick<CountBatch, 't0' | 'dt' | 'ch'>): { channel: string; at: number; rate: number }[] {
  const out: { channel: string; at: number; rate: number }[] = [];
  for (const [key, counts] of Object.entries(batch.ch)) {
    let sum = 0;
    for (const c of counts) sum += c;
    const seconds = (counts.length * batch.dt) / 1000;
    out.push({ channel: `${gatewayId}/${key}`, at: batch.t0 + counts.length * batch.dt, rate: sum / seconds });
  }
  return out;
}

export function samplesFromBatch(
  rule: RuleForMetrics,
  gatewayId: string,
  batch: Pick<CountBatch, 't0' | 'dt' | 'ch'>,
  auxChannels: ReadonlySet<string>,
): SubjectSample[] {
  if (!isBatchMetric(rule.metric)) return [];
  return batchRates(gatewayId, batch)
    .filter((r) => (rule.channel ? r.channel === rule.channel : rule.metric !== 'dark_high' || auxChannels.has(r.channel)))
    .map((r) => ({ subject: r.channel, sample: { at: r.at, value: r.rate, from: batch.t0 } }));
}

/** Gateways named by a gateway rule: its own channel field when set, else all of the bench's. */
function gatewaysOf(rule: RuleForMetrics, benchGateways: readonly string[]): string[] {
  return rule.channel ? benchGateways.filter((g) => g === rule.channel) : [...benchGateways];
}

/**
 * Whether the rule still gets samples about this subject: after an edit to another channel or
 * gateway, or once the subject's gateway is revoked, nothing would ever clear its open alarm.
 */
export function watches(rule: RuleForMetrics, subject: string, benchGateways: readonly string[], auxChannels: ReadonlySet<string>): boolean {
  switch (METRIC_INFO[rule.metric].subject) {
    case 'bench':
      return subject === '';
    case 'gateway':
      return gatewaysOf(rule, benchGateways).includes(subject);
    case 'channel': {
      const bar = subject.indexOf('/');
      if (bar < 0 || !benchGateways.includes(subject.slice(0, bar))) return false;
      return rule.channel ? subject === rule.channel : rule.metric !== 'dark_high' || auxChannels.has(subject);
    }
  }
}

export function silentSamples(rule: RuleForMetrics, benchGateways: readonly string[], lastSeen: ReadonlyMap<string, number>, now: number): SubjectSample[] {
  if (rule.metric !== 'gateway_silent') return [];
  return gatewaysOf(rule, benchGateways)
    .filter((g) => lastSeen.has(g))
    .map((g) => ({ subject: g, sample: { at: now, value: (now - lastSeen.get(g)!) / 1000 } }));
}

/** Sliding-window count of rejections per gateway. */
export class RejectCounter {
  private readonly times = new Map<string, number[]>();

  add(gatewayId: string, at: number): void {
    const list = this.times.get(gatewayId) ?? [];
    list.push(at);
    this.times.set(gatewayId, list);
  }

  count(gatewayId: string, now: number): number {
    const list = this.times.get(gatewayId);
    if (!list) return 0;
    const kept = list.filter((t) => t > now - REJECT_WINDOW_MS);
    if (kept.length === 0) this.times.delete(gatewayId);
    else this.times.set(gatewayId, kept);
    return kept.length;
  }

  gateways(): string[] {
    return [...this.times.keys()];
  }
}

export function rejectSamples(rule: RuleForMetrics, benchGateways: readonly string[], counter: RejectCounter, now: number): SubjectSample[] {
  if (rule.metric !== 'rejected_batches') return [];
  return gatewaysOf(rule, benchGateways).map((g) => ({ subject: g, sample: { at: now, value: counter.count(g, now) } }));
}
