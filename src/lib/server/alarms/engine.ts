// The alarm engine: listens to the server's event bus, feeds the pure evaluator, and does the I/O
// for each transition — the alarm_events row, the live push to the bench's WebSocket clients, the
// e-mail through the mail policy. One per process (registered as runtime().alarms).
//
// Work that touches the database runs one item at a time in order (a promise chain), so a raise
// is always written before its clear; the evaluation itself is synchronous in the event handler,
// which keeps the batch → alarm latency to one INSERT.
import { and, eq, inArray, isNotNull, isNull } from 'drizzle-orm';
import { alarmMessage, METRIC_INFO, type AlarmEventView, type AlarmMessage } from '../../alarm-messages.ts';
import { formatRate } from '../../client/format.ts';
import { benchChannels } from '../benches.ts';
import { getDb } from '../db/index.ts';
import { alarmRules, benches, gateways, settings, type AlarmRule } from '../db/schema.ts';
import { serverEvents, type ServerEvents } from '../events.ts';
import { sendMail } from '../mail/send.ts';
import { runtime } from '../runtime.ts';
import { shownVisibility } from '../../sweep-visibility.ts';
import { AlarmStates, type Transition } from './evaluator.ts';
import { getEvent, insertRaised, markCleared, markClearedById, openEvents } from './event-store.ts';
import { MailPolicy, mailPolicyStateSchema, type MailItem, type MailPolicyOptions, type OutgoingAlarmMail } from './mail-policy.ts';
import { rejectSamples, RejectCounter, samplesFromBatch, silentSamples, watches, type SubjectSample } from './metrics.ts';

export interface AlarmEngineOptions {
  now?: () => number;
  /** Timer period for silence, rejection windows and due mail, ms. */
  tickMs?: number;
  mail?: MailPolicyOptions;
  send?: (mail: OutgoingAlarmMail) => Promise<void>;
  /** Data that ended longer ago than this is history (a replay after an outage, an import) and raises nothing, ms. */
  staleMs?: number;
  /** How often bench names, gateways and channel roles are re-read, ms (rules reload at once on change). */
  refreshMs?: number;
  /** The settings row that keeps the mail policy's state (tests that run engines side by side use their own). */
  mailStateName?: string;
}

interface BenchContext {
  name: string;
  /** Gateways that can connect (have a token, not revoked): the ones that can fall silent. */
  gateways: string[];
  aux: Set<string>;
}

export class AlarmEngine {
  private readonly now: () => number;
  private readonly staleMs: number;
  private readonly refreshMs: number;
  /** Waiting digests and the last mail per rule are kept in this settings row. */
  private readonly mailStateName: string;
  private readonly policy: MailPolicy;
  private readonly send: (mail: OutgoingAlarmMail) => Promise<void>;
  private byBench = new Map<string, AlarmRule[]>();
  private contexts = new Map<string, BenchContext>();
  private readonly states = new AlarmStates();
  private readonly lastSeen = new Map<string, number>();
  private readonly rejects = new RejectCounter();
  private queue: Promise<void> = Promise.resolve();
  private timer: NodeJS.Timeout | null = null;
  private readonly unsubscribers: (() => void)[] = [];
  private lastRefresh = 0;
  /** Whether the open events have been taken over as raised states (once, at start). */
  private restored = false;
  /** When this engine started: no gateway's silence counts from before it. */
  private startedAt = 0;

  constructor(private readonly opts: AlarmEngineOptions = {}) {
    this.now = opts.now ?? Date.now;
    this.staleMs = opts.staleMs ?? 120_000;
    this.refreshMs = opts.refreshMs ?? 30_000;
    this.mailStateName = opts.mailStateName ?? 'alarm-mail';
    this.policy = new MailPolicy(opts.mail);
    this.send = opts.send ?? sendMail;
  }

  async start(): Promise<void> {
    // Not through the queue, which only logs failures: starting with an empty policy would
    // overwrite the saved digests at the first save.
    await this.loadMailState();
    this.startedAt = this.now();
    await this.reload();
    const bus = serverEvents();
    const on = <E extends keyof ServerEvents>(name: E, fn: (...args: ServerEvents[E]) => void) => {
      bus.on(name, fn as never);
      this.unsubscribers.push(() => bus.off(name, fn as never));
    };
    on('batch-stored', (e) => this.onBatch(e));
    on('batch-rejected', (e) => this.onRejected(e));
    on('gateway-status', (e) => this.lastSeen.set(e.gatewayId, e.at));
    on('sweep-fitted', (e) => this.evaluate(e.benchId, 'visibility_low', e.sweep.endMs, () => [{ subject: '', sample: { at: e.sweep.endMs, value: shownVisibility(e.sweep).value } }]));
    on('phase-update', (e) =>
      this.evaluate(e.benchId, 'phase_drift', e.at, () => (e.driftRadPerS === null ? [] : [{ subject: '', sample: { at: e.at, value: Math.abs(e.driftRadPerS) } }])),
    );
    this.timer = setInterval(() => this.tick(), this.opts.tickMs ?? 1_000);
    this.timer.unref();
  }

  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    for (const off of this.unsubscribers.splice(0)) off();
    await this.idle();
    await this.sendDue();
    // What still waits for its quiet period is sent by the next start.
    await this.enqueue(() => this.saveMailState());
  }

  /** Resolves when every queued write has run. */
  idle(): Promise<void> {
    return this.queue;
  }

  /** Re-reads the rules (after a change) and the bench context; closes events of rules now gone or disabled, and of subjects a rule no longer watches. */
  reload(): Promise<void> {
    return this.enqueue(() => this.load());
  }

  /**
   * After `deleteRule` committed: the rule is watched no more, and the events its deletion closed
   * go out as cleared, live and by mail to the rule's recipients, marked as of a deleted rule.
   */
  ruleDeleted(rule: AlarmRule, closedIds: number[], at: number): Promise<void> {
    const rules = this.byBench.get(rule.benchId);
    if (rules) this.byBench.set(rule.benchId, rules.filter((r) => r.id !== rule.id));
    this.states.forgetRule(rule.id);
    return this.enqueue(async () => {
      for (const id of closedIds) {
        const view = await getEvent(id);
        if (!view) continue;
        publishAlarm(alarmMessage('cleared', view));
        this.policy.offer({ ...this.mailAbout(rule, view.subject), change: 'cleared', value: null, at, ruleDeleted: true }, this.now());
      }
      await this.saveMailState();
    });
  }

  /** Runs the timer work now (tests drive it with fake time). */
  tick(): void {
    const now = this.now();
    for (const benchId of this.byBench.keys()) {
      const ctx = this.contexts.get(benchId);
      if (!ctx) continue;
      this.evaluate(benchId, 'gateway_silent', now, (rule) => silentSamples(rule, ctx.gateways, this.lastSeen, now));
      this.evaluate(benchId, 'rejected_batches', now, (rule) => rejectSamples(rule, ctx.gateways, this.rejects, now));
    }
    void this.sendDue();
    if (now - this.lastRefresh >= this.refreshMs) void this.reload();
  }

  private onBatch(e: ServerEvents['batch-stored'][0]): void {
    this.lastSeen.set(e.gatewayId, e.receivedAt);
    const rules = this.byBench.get(e.benchId);
    if (!rules) return;
    const n = Object.values(e.batch.ch)[0]?.length ?? 0;
    const end = e.batch.t0 + n * e.batch.dt;
    const aux = this.contexts.get(e.benchId)?.aux ?? new Set<string>();
    for (const metric of ['rate_high', 'rate_low', 'dark_high'] as const) {
      this.evaluate(e.benchId, metric, end, (rule) => samplesFromBatch(rule, e.gatewayId, e.batch, aux));
    }
  }

  private onRejected(e: ServerEvents['batch-rejected'][0]): void {
    if (!e.benchId) return;
    this.rejects.add(e.gatewayId, e.at);
    const ctx = this.contexts.get(e.benchId);
    if (ctx) this.evaluate(e.benchId, 'rejected_batches', e.at, (rule) => rejectSamples(rule, ctx.gateways, this.rejects, e.at));
  }

  private evaluate(benchId: string, metric: AlarmRule['metric'], dataAt: number, samplesOf: (rule: AlarmRule) => SubjectSample[]): void {
    const rules = this.byBench.get(benchId)?.filter((r) => r.metric === metric);
    if (!rules?.length || dataAt < this.now() - this.staleMs) return;
    for (const rule of rules) {
      for (const { subject, sample } of samplesOf(rule)) {
        const t = this.states.feed(rule.id, subject, rule, sample);
        if (t) void this.enqueue(() => this.apply(rule, subject, t));
      }
    }
  }

  private enqueue(work: () => Promise<void>): Promise<void> {
    this.queue = this.queue.then(work).catch((err: unknown) => console.error('[alarms]', err));
    return this.queue;
  }

  private async apply(rule: AlarmRule, subject: string, t: Transition): Promise<void> {
    let view: AlarmEventView | null;
    if (t.kind === 'raise') {
      view = await insertRaised({ ruleId: rule.id, ruleName: rule.name, metric: rule.metric, benchId: rule.benchId, subject, severity: rule.severity, message: describe(rule, subject, t.value), value: t.value, at: t.at });
    } else {
      view = await markCleared(rule.id, subject, t.at);
    }
    if (!view) return;
    const change = t.kind === 'raise' ? 'raised' : 'cleared';
    publishAlarm(alarmMessage(change, view));
    this.policy.offer({ ...this.mailAbout(rule, subject), change, value: t.value, at: t.at }, this.now());
    await this.saveMailState();
  }

  private mailAbout(rule: AlarmRule, subject: string): Omit<MailItem, 'change' | 'value' | 'at'> {
    return {
      ruleId: rule.id,
      ruleName: rule.name,
      benchId: rule.benchId,
      benchName: this.contexts.get(rule.benchId)?.name ?? rule.benchId,
      metric: rule.metric,
      subject,
      severity: rule.severity,
      threshold: rule.threshold,
      clearThreshold: rule.clearThreshold,
      recipients: rule.recipients,
      ruleDeleted: false,
    };
  }

  private async sendDue(): Promise<void> {
    const due = this.policy.due(this.now());
    if (due.length === 0) return;
    // Saved before sending: a crash in between loses these mails rather than sending them twice.
    await this.enqueue(() => this.saveMailState());
    let failed = false;
    for (const mail of due) {
      try {
        await this.send(mail);
      } catch (err) {
        // Tried again with a growing wait (the policy bounds how many and how long), so a mail
        // server that is down for a while delays the alarm mail rather than losing it.
        const kept = this.policy.failed(mail, this.now());
        failed = true;
        console.warn(`[alarms] mail not sent${kept ? ', will try again' : ', given up after a day of tries'}:`, err instanceof Error ? err.message : err);
      }
    }
    if (failed) await this.enqueue(() => this.saveMailState());
  }

  private async loadMailState(): Promise<void> {
    const [row] = await getDb().select().from(settings).where(eq(settings.name, this.mailStateName));
    if (!row) return;
    const parsed = mailPolicyStateSchema.safeParse(row.value);
    if (parsed.success) this.policy.restore(parsed.data);
    else console.warn('[alarms] saved mail state unreadable, starting afresh:', parsed.error.issues[0]?.message);
  }

  /** Keeps the policy's state in the database, so a restart (or a crash) loses no digest. */
  private async saveMailState(): Promise<void> {
    const value = this.policy.state();
    await getDb()
      .insert(settings)
      .values({ name: this.mailStateName, value })
      .onConflictDoUpdate({ target: settings.name, set: { value, updatedAt: new Date() } });
  }

  private async load(): Promise<void> {
    const db = getDb();
    this.lastRefresh = this.now();
    const rules = await db.select().from(alarmRules).where(eq(alarmRules.enabled, true));
    const open = await openEvents();
    const byBench = new Map<string, AlarmRule[]>();
    for (const r of rules) byBench.set(r.benchId, [...(byBench.get(r.benchId) ?? []), r]);
    const benchIds = [...byBench.keys()];
    const contexts = new Map<string, BenchContext>();
    if (benchIds.length) {
      const names = await db.select({ id: benches.id, name: benches.name }).from(benches).where(inArray(benches.id, benchIds));
      const gws = await db
        .select({ id: gateways.id, benchId: gateways.benchId, lastSeenAt: gateways.lastSeenAt, createdAt: gateways.createdAt })
        .from(gateways)
        .where(and(inArray(gateways.benchId, benchIds), isNotNull(gateways.tokenHash), isNull(gateways.revokedAt)));
      for (const b of names) {
        const channels = await benchChannels(b.id);
        contexts.set(b.id, {
          name: b.name,
          gateways: gws.filter((g) => g.benchId === b.id).map((g) => g.id),
          aux: new Set(channels.filter((c) => c.role === 'aux').map((c) => `${c.gateway}/${c.key}`)),
        });
      }
      // Silence counts from the gateway's last stored message or its creation, but not from before
      // this start: the server's own downtime is no gateway's silence (counted, it raised every
      // silence rule at a restart longer than its limit, cleared once the gateway reconnected). A
      // gateway already alarmed as silent before the restart stays so.
      const silentRules = new Set(rules.filter((r) => r.metric === 'gateway_silent').map((r) => r.id));
      const alarmedSilent = new Set(open.filter((e) => e.ruleId !== null && silentRules.has(e.ruleId)).map((e) => e.subject));
      for (const g of gws) {
        if (this.lastSeen.has(g.id)) continue;
        const seen = (g.lastSeenAt ?? g.createdAt).getTime();
        this.lastSeen.set(g.id, alarmedSilent.has(g.id) ? seen : Math.max(seen, this.startedAt));
      }
    }
    this.byBench = byBench;
    this.contexts = contexts;

    const enabled = new Map(rules.map((r) => [r.id, r]));
    const restoring = !this.restored;
    for (const event of open) {
      if (event.ruleId === null) {
        // Its rule was deleted without closing it (deleteRule closes them; a hand-written DELETE
        // does not): nothing would ever clear it.
        const view = await markClearedById(event.id, this.now());
        if (view) publishAlarm(alarmMessage('cleared', view));
        continue;
      }
      const rule = enabled.get(event.ruleId);
      const ctx = rule && contexts.get(rule.benchId);
      if (rule && ctx && watches(rule, event.subject, ctx.gateways, ctx.aux)) {
        // Only at start: later, the states are the truth and the rows follow them through the queue.
        // A clear decided while this reload ran is written after it, so its event still read open
        // here, and restoring it would keep the pair raised with no open event: no later raise.
        if (restoring) this.states.restoreRaised(event.ruleId, event.subject, event.raisedAt.getTime());
        continue;
      }
      // The rule was disabled, or no longer gets samples of this subject (edited to another
      // channel, the gateway revoked): the alarm ends now rather than hang open forever.
      const view = await markCleared(event.ruleId, event.subject, this.now());
      if (view) publishAlarm(alarmMessage('cleared', view));
      if (rule) this.states.forget(event.ruleId, event.subject);
      else this.states.forgetRule(event.ruleId);
    }
    this.restored = true;
  }
}

function fmt(v: number): string {
  return Math.abs(v) >= 1e4 ? v.toExponential(2) : String(Number(v.toPrecision(4)));
}

function describe(rule: AlarmRule, subject: string, value: number): string {
  const info = METRIC_INFO[rule.metric];
  const where = subject ? `${subject}: ` : '';
  // Rates read as everywhere else in the app (c/s, kc/s, Mc/s); other figures with their unit.
  const show = (v: number) => (info.unit === 'counts/s' ? formatRate(v) : `${fmt(v)}${info.unit ? ` ${info.unit}` : ''}`);
  return `${where}${info.label.toLowerCase()} — ${show(value)}, limit ${show(rule.threshold)}`;
}

/** Pushes to the bench's WebSocket clients when the live hub runs in this process. */
export function publishAlarm(msg: AlarmMessage): void {
  runtime().live?.publish(msg.bench, msg);
}

const KEY = 'alarms';

export async function startAlarmEngine(opts: AlarmEngineOptions = {}): Promise<AlarmEngine> {
  const engine = new AlarmEngine(opts);
  await engine.start();
  runtime()[KEY] = engine;
  return engine;
}

export async function stopAlarmEngine(engine: AlarmEngine): Promise<void> {
  await engine.stop();
  if (runtime()[KEY] === engine) delete runtime()[KEY];
}
