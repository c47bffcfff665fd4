// The demo benches' corrections and alarm rules, as the lab's admin would have entered them: each
// channel's measured dark rate, dead time and relative efficiency (simulators/demo-calibrations.ts,
// derived from the bench's own simulator), and a few rules the demo does not trip in normal running
// (one demo alarm apart, which says so in its name).
// Written once, into a fresh demo bench only (the test the recorded past uses: its gateway has
// never stored a bin and it has never held a run), so its past is fitted with them and nothing an
// admin changed later is ever overwritten.
import { and, eq, isNull, sql } from 'drizzle-orm';
import type { z } from 'zod';
import type { DemoBench } from '../../../simulators/demo-benches.ts';
import { demoCalibrations } from '../../../simulators/demo-calibrations.ts';
import { ruleInputSchema } from './alarms/rules.ts';
import { getDb } from './db/index.ts';
import { alarmRules, channels } from './db/schema.ts';

/**
 * Where the seeded rules mail: the demo operator of seed.ts's DEMO_ACCOUNTS (named here, since
 * seed.ts imports this module), caught by the local mail catcher when SMTP_URL is unset.
 */
export const ON_CALL = ['operator@lab.example'];

/**
 * Overexposure of a Si SPAD, well below saturation and damage: its 22 ns dead time caps the count
 * rate near 1/τ ≈ 45 Mc/s, and at 1 Mc/s it still loses only 2% (Knoll, ch. 4). The demo's
 * brightest Si channels count ≈ 240 kc/s (633 nm output) and ≈ 200 kc/s (810 nm herald).
 */
const SI_OVEREXPOSURE: z.input<typeof ruleInputSchema> = {
  name: 'Detector overexposure (Si SPAD above 1 Mc/s: room light or a beam block out?)',
  metric: 'rate_high',
  threshold: 1e6,
  clearThreshold: 5e5,
  severity: 'critical',
  recipients: ON_CALL,
};

/** The rules of each demo bench. */
export const DEMO_ALARM_RULES: Readonly<Record<string, readonly z.input<typeof ruleInputSchema>[]>> = {
  'mz-633': [
    SI_OVEREXPOSURE,
    // Aligned, the teaching bench fits 0.985 net of darks; in the demo's past it began the day at
    // 0.90, which this rule calls for re-alignment, and a knocked mirror took it to 0.94, which it lets pass.
    { name: 'Fringe visibility below 0.92 (re-align the arms)', metric: 'visibility_low', threshold: 0.92, clearThreshold: 0.95, severity: 'warning', recipients: ON_CALL },
  ],
  'mz-810': [
    SI_OVEREXPOSURE,
    // Fits 0.97 on its gated outputs.
    { name: 'Fringe visibility below 0.92 (re-align the arms)', metric: 'visibility_low', threshold: 0.92, clearThreshold: 0.95, severity: 'warning', recipients: ON_CALL },
    // ≈ 200 kc/s of heralds with the pump on; half of it for 5 s means the pump or the crystal, not noise.
    { name: 'Herald rate below 100 kc/s (pump off or crystal walked?)', metric: 'rate_low', channel: 'gw-810/h', threshold: 1e5, clearThreshold: 1.5e5, holdSeconds: 5, severity: 'warning', recipients: ON_CALL },
  ],
  'mz-1550': [
    // 10 µs dead time: the counter saturates at 1/τ = 100 kc/s and loses 30% at 30 kc/s; the bright fringe is ≈ 10 kc/s.
    { name: 'Detector overexposure (InGaAs SPAD above 30 kc/s, 30% dead-time loss)', metric: 'rate_high', threshold: 3e4, clearThreshold: 2e4, severity: 'critical', recipients: ON_CALL },
    // Net of its large darks the fibre bench fits 0.94–0.95 a pass (0.81 raw); its fast drift bends single passes a little.
    { name: 'Fringe visibility below 0.85 (polarisation drifted?)', metric: 'visibility_low', threshold: 0.85, clearThreshold: 0.9, severity: 'warning', recipients: ON_CALL },
    // The one rule meant to trip, so a newcomer sees an alarm raised, mailed and acknowledged: the
    // bench's phase, read while it holds after the recorded past's sweep, drifts 50 ± 10 mrad/s
    // (0.05 rad/s linear and a fast random walk); one event and one mail, raised within a minute
    // of the start and left open (its clear level is an enclosed bench's drift).
    { name: 'DEMO ALARM, trips on purpose: phase drift above 20 mrad/s (this fibre is unenclosed)', metric: 'phase_drift', threshold: 0.02, clearThreshold: 0.005, holdSeconds: 30, severity: 'info', recipients: ON_CALL },
  ],
};

/**
 * The bench's corrections and rules when it is fresh; once written (or once an admin has changed
 * them), never again. One transaction per bench under the lock the recorded past takes, so two
 * instances starting on one fresh database write them once.
 */
export async function seedLabSettings(bench: DemoBench): Promise<void> {
  await getDb().transaction(async (tx) => {
    await tx.execute(sql`select pg_advisory_xact_lock(hashtext(${`demo-past:${bench.id}`}))`);
    const fresh = await tx.execute(sql`
      select 1 from gateways g
       where g.id = ${bench.gateway} and g.bench_id = ${bench.id}
         and not exists (select 1 from count_batches c where c.gateway_id = g.id)
         and not exists (select 1 from runs r where r.bench_id = ${bench.id})`);
    if (fresh.rows.length === 0) return;

    for (const [key, cal] of demoCalibrations(bench)) {
      // Only a row that carries no corrections and that no admin has edited (an edit writes an
      // audit row): corrections an admin cleared stay cleared.
      await tx
        .update(channels)
        .set({ darkRate: cal.darkRate, darkRateErr: cal.darkRateErr, deadTimeNs: cal.deadTimeNs, deadTimeModel: cal.deadTimeModel, efficiency: cal.efficiency })
        .where(
          and(
            eq(channels.gatewayId, bench.gateway),
            eq(channels.key, key),
            isNull(channels.darkRate),
            isNull(channels.deadTimeNs),
            eq(channels.efficiency, 1),
            sql`not exists (select 1 from audit_log a where a.entity = 'channel' and a.entity_id = ${`${bench.gateway}/${key}`})`,
          ),
        );
    }

    // No rule yet, and none an admin made and deleted here.
    const touched = await tx.execute(sql`
      select 1 where exists (select 1 from alarm_rules where bench_id = ${bench.id})
          or exists (select 1 from audit_log a where a.entity = 'alarm_rule' and ${bench.id} in (a.after->>'benchId', a.before->>'benchId'))`);
    if (touched.rows.length > 0) return;
    const rules = (DEMO_ALARM_RULES[bench.id] ?? []).map((input) => ({ benchId: bench.id, ...ruleInputSchema.parse(input) }));
    if (rules.length) await tx.insert(alarmRules).values(rules);
  });
}
