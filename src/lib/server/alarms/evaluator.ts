// The alarm state machine, pure: samples in, raise/clear transitions out. Time is whatever the
// caller passes (ms), so tests drive it with fixtures and fake time; no clocks, no I/O here.
//
// Hysteresis: a "high" metric raises above `threshold` and clears only below `clearThreshold`
// (≤ threshold); a "low" metric mirrors it. Between the two the state does not change, so a
// signal hovering at the limit raises once, not once per sample.
// Hold time: the value must stay beyond `threshold` for `holdSeconds` (measured between sample
// times) before the alarm raises; a single sample back inside the limit restarts the hold, and so
// does a gap in the data (a sample that says where its data begins, and begins after the last one
// ended): two dim seconds either side of a gateway's outage are not a dim minute.
// Clearing needs no hold: the clear threshold already keeps a noisy signal from flapping.
import { METRIC_INFO, type AlarmMetric } from '../../alarm-messages.ts';

export interface RuleLimits {
  metric: AlarmMetric;
  threshold: number;
  clearThreshold: number;
  holdSeconds: number;
}

export type AlarmState = { phase: 'ok' } | { phase: 'pending'; since: number; last: number } | { phase: 'raised'; since: number };

export interface Sample {
  /** ms since the epoch: the data's own time for batch metrics, the clock for timers. */
  at: number;
  value: number;
  /** Where the sample's data begins (a batch's first bin), for metrics whose data runs without breaks. */
  from?: number;
}

export type Transition = { kind: 'raise' | 'clear'; at: number; value: number };

export const OK: AlarmState = { phase: 'ok' };

export function breaches(limits: RuleLimits, value: number): boolean {
  return METRIC_INFO[limits.metric].direction === 'high' ? value > limits.threshold : value < limits.threshold;
}

export function recovered(limits: RuleLimits, value: number): boolean {
  return METRIC_INFO[limits.metric].direction === 'high' ? value < limits.clearThreshold : value > limits.clearThreshold;
}

/** One sample through the state machine. NaN samples change nothing. */
export function step(state: AlarmState, limits: RuleLimits, sample: Sample): { state: AlarmState; transition: Transition | null } {
  const { at, value } = sample;
  if (!Number.isFinite(value)) return { state, transition: null };
  const holdMs = Math.max(0, limits.holdSeconds) * 1000;
  switch (state.phase) {
    case 'ok':
      if (!breaches(limits, value)) return { state, transition: null };
      if (holdMs === 0) return { state: { phase: 'raised', since: at }, transition: { kind: 'raise', at, value } };
      return { state: { phase: 'pending', since: at, last: at }, transition: null };
    case 'pending':
      if (!breaches(limits, value)) return { state: OK, transition: null };
      if (sample.from !== undefined && sample.from > state.last) return { state: { phase: 'pending', since: at, last: at }, transition: null };
      if (at - state.since >= holdMs) return { state: { phase: 'raised', since: at }, transition: { kind: 'raise', at, value } };
      return { state: { ...state, last: at }, transition: null };
    case 'raised':
      if (recovered(limits, value)) return { state: OK, transition: { kind: 'clear', at, value } };
      return { state, transition: null };
  }
}

/** States of every (rule, subject) pair; the engine owns one. */
export class AlarmStates {
  private readonly states = new Map<string, AlarmState>();

  private static key(ruleId: number, subject: string): string {
    return `${ruleId}|${subject}`;
  }

  get(ruleId: number, subject: string): AlarmState {
    return this.states.get(AlarmStates.key(ruleId, subject)) ?? OK;
  }

  /** Marks a pair raised without a transition (restoring open events after a restart). */
  restoreRaised(ruleId: number, subject: string, since: number): void {
    this.states.set(AlarmStates.key(ruleId, subject), { phase: 'raised', since });
  }

  feed(ruleId: number, subject: string, limits: RuleLimits, sample: Sample): Transition | null {
    const key = AlarmStates.key(ruleId, subject);
    const next = step(this.states.get(key) ?? OK, limits, sample);
    if (next.state.phase === 'ok') this.states.delete(key);
    else this.states.set(key, next.state);
    return next.transition;
  }

  /** Raised pairs of one rule (to close them when the rule is disabled or deleted). */
  raisedSubjects(ruleId: number): string[] {
    const out: string[] = [];
    for (const [key, st] of this.states) {
      const bar = key.indexOf('|');
      if (Number(key.slice(0, bar)) === ruleId && st.phase === 'raised') out.push(key.slice(bar + 1));
    }
    return out;
  }

  forget(ruleId: number, subject: string): void {
    this.states.delete(AlarmStates.key(ruleId, subject));
  }

  forgetRule(ruleId: number): void {
    for (const key of [...this.states.keys()]) if (key.startsWith(`${ruleId}|`)) this.states.delete(key);
  }
}
