// The demo's seeded alarm rules are valid rules on the demo's own benches and channels, and the
// simulator in normal running stays well inside every one but the rule that says it trips.
import { describe, expect, it } from 'vitest';
import { DEMO_BENCHES, createDemoSimulator } from '../../../simulators/demo-benches.ts';
import { ruleInputSchema } from './alarms/rules.ts';
import { DEMO_ALARM_RULES, ON_CALL } from './seed-lab-settings.ts';
import { DEMO_ACCOUNTS } from './seed.ts';

describe('demo alarm rules', () => {
  it('are valid rules for the demo benches, naming only their channels, mailing a demo account', () => {
    expect(ON_CALL.every((to) => DEMO_ACCOUNTS.some((a) => a.email === to))).toBe(true);
    expect(Object.keys(DEMO_ALARM_RULES).sort()).toEqual(DEMO_BENCHES.map((b) => b.id).sort());
    for (const b of DEMO_BENCHES) {
      for (const input of DEMO_ALARM_RULES[b.id]!) {
        const rule = ruleInputSchema.parse(input);
        if (rule.channel) expect(b.channels.map((c) => `${b.gateway}/${c.key}`), rule.name).toContain(rule.channel);
      }
    }
  });

  it('leave the simulator’s normal running alone, bar the one named a demo alarm', () => {
    const tripping: string[] = [];
    for (const b of DEMO_BENCHES) {
      const sim = createDemoSimulator(b);
      // Expected rates over a whole fringe, every channel.
      const rates = Array.from({ length: 64 }, (_, i) => Object.entries(sim.expectedRates((2 * Math.PI * i) / 64).ch)).flat();
      for (const input of DEMO_ALARM_RULES[b.id]!) {
        const rule = ruleInputSchema.parse(input);
        const watched = rates.filter(([key]) => !rule.channel || rule.channel === `${b.gateway}/${key}`).map(([, r]) => r);
        if (rule.name.startsWith('DEMO ALARM')) {
          tripping.push(`${b.id}: ${rule.metric}`);
          continue;
        }
        // Margins far beyond a 100 ms batch's Poisson spread (≤ 1% at these rates).
        if (rule.metric === 'rate_high') expect(Math.max(...watched) * 2, rule.name).toBeLessThan(rule.threshold);
        else if (rule.metric === 'rate_low') expect(Math.min(...watched) / 1.5, rule.name).toBeGreaterThan(rule.threshold);
        // Passes fit the optics' visibility net of darks, within about 0.015 (demo-past.test.ts).
        else if (rule.metric === 'visibility_low') expect(b.model.optics.visibility - rule.threshold, rule.name).toBeGreaterThanOrEqual(0.04);
        else throw new Error(`no normal-running check for ${rule.metric}`);
      }
    }
    expect(tripping).toEqual(['mz-1550: phase_drift']);
  });
});
