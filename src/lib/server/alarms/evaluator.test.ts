import { describe, expect, it } from 'vitest';
import { AlarmStates, step, OK, type RuleLimits, type AlarmState } from './evaluator.ts';

const high: RuleLimits = { metric: 'rate_high', threshold: 1000, clearThreshold: 800, holdSeconds: 0 };
const low: RuleLimits = { metric: 'visibility_low', threshold: 0.8, clearThreshold: 0.9, holdSeconds: 0 };

/** Runs values sampled every `periodMs` from t = 0 and returns the transitions with their times. */
function run(limits: RuleLimits, values: number[], periodMs = 1000) {
  let state: AlarmState = OK;
  const out: string[] = [];
  values.forEach((value, i) => {
    const r = step(state, limits, { at: i * periodMs, value });
    state = r.state;
    if (r.transition) out.push(`${r.transition.kind}@${r.transition.at}`);
  });
  return out;
}

describe('alarm evaluator', () => {
  it('raises above the threshold and clears only below the clear threshold (hysteresis)', () => {
    expect(run(high, [500, 1200, 900, 950, 1100, 850, 790, 900])).toEqual(['raise@1000', 'clear@6000']);
  });

  it('mirrors the hysteresis for low metrics', () => {
    expect(run(low, [0.95, 0.7, 0.85, 0.89, 0.91, 0.85])).toEqual(['raise@1000', 'clear@4000']);
  });

  it('does not raise at exactly the threshold', () => {
    expect(run(high, [1000, 1000, 1000])).toEqual([]);
  });

  it('raises only after the value stays beyond the threshold for the hold time', () => {
    const held = { ...high, holdSeconds: 3 };
    // Beyond from t=1 s: raises at t=4 s, not before.
    expect(run(held, [0, 1500, 1500, 1500, 1500, 1500])).toEqual(['raise@4000']);
  });

  it('restarts the hold when a sample falls back inside the limit', () => {
    const held = { ...high, holdSeconds: 3 };
    expect(run(held, [1500, 1500, 1500, 900, 1500, 1500, 1500])).toEqual([]);
    expect(run(held, [1500, 1500, 1500, 900, 1500, 1500, 1500, 1500])).toEqual(['raise@7000']);
  });

  it('restarts the hold after a gap in the data', () => {
    const held = { ...high, holdSeconds: 3 };
    // Batches of 1 s stamped at their end: 1 s beyond, 10 s without data, then beyond again.
    const feed = (samples: [from: number, value: number][]) => {
      let state: AlarmState = OK;
      return samples.flatMap(([from, value]) => {
        const r = step(state, held, { at: from + 1000, value, from });
        state = r.state;
        return r.transition ? [`${r.transition.kind}@${r.transition.at}`] : [];
      });
    };
    expect(feed([[0, 1500], [11_000, 1500], [12_000, 1500], [13_000, 1500]])).toEqual([]);
    expect(feed([[0, 1500], [11_000, 1500], [12_000, 1500], [13_000, 1500], [14_000, 1500]])).toEqual(['raise@15000']);
    expect(feed([[0, 1500], [1_000, 1500], [2_000, 1500], [3_000, 1500]])).toEqual(['raise@4000']);
  });

  it('a signal flapping around the threshold raises once while inside the hysteresis band', () => {
    const values = Array.from({ length: 100 }, (_, i) => (i % 2 ? 1010 : 990));
    expect(run(high, values)).toEqual(['raise@1000']);
  });

  it('ignores non-finite samples', () => {
    expect(run(high, [Number.NaN, Infinity, 1200])).toEqual(['raise@2000']);
  });

  it('keeps one state per (rule, subject) and restores raised pairs', () => {
    const s = new AlarmStates();
    expect(s.feed(1, 'gw/a', high, { at: 0, value: 2000 })?.kind).toBe('raise');
    expect(s.feed(1, 'gw/b', high, { at: 0, value: 10 })).toBeNull();
    expect(s.raisedSubjects(1)).toEqual(['gw/a']);
    s.restoreRaised(2, '', 0);
    expect(s.feed(2, '', high, { at: 1, value: 1500 })).toBeNull();
    expect(s.feed(2, '', high, { at: 2, value: 10 })?.kind).toBe('clear');
    s.forgetRule(1);
    expect(s.get(1, 'gw/a')).toEqual(OK);
  });
});
