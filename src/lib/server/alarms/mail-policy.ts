// When alarm e-mail goes out, pure (time passed in, mails handed back; the engine sends them).
// - Per rule, at most one mail per quiet period (10 min by default): a flapping signal sends one
//   mail, and every later change of that rule within the period is folded into a digest sent when
//   the period ends.
// - Changes that arrive together (within `gatherMs`, 2 s by default) are sent as one mail per
//   recipient list: a digest when several rules fire at once (a power cut trips them all).
// - A mail the server did not take (the mail server down) comes back through `failed()` and is
//   tried again after 1 min, 2, 4, … (at most 15 min apart) for up to a day; at most 100 wait.
// Its state (what waits, when each rule last mailed) round-trips through `state()`/`restore()`, so
// the engine can keep it in the database and a restart loses no digest.
import { z } from 'zod';
import { ALARM_METRICS, METRIC_INFO, ruleLabel, SEVERITIES, type AlarmMetric, type Severity } from '../../alarm-messages.ts';
import { formatRate } from '../../client/format.ts';

const SEVERITY_ORDER: readonly Severity[] = SEVERITIES;

export interface MailItem {
  ruleId: number;
  ruleName: string;
  benchId: string;
  benchName: string;
  metric: AlarmMetric;
  subject: string;
  severity: Severity;
  change: 'raised' | 'cleared';
  value: number | null;
  threshold: number;
  clearThreshold: number;
  /** ms since the epoch. */
  at: number;
  recipients: readonly string[];
  /** The rule was deleted: this change is its open alarm cleared with it, or came just before. */
  ruleDeleted: boolean;
}

const mailItemSchema = z.object({
  ruleId: z.number().int(),
  ruleName: z.string(),
  benchId: z.string(),
  benchName: z.string(),
  metric: z.enum(ALARM_METRICS),
  subject: z.string(),
  severity: z.enum(SEVERITIES),
  change: z.enum(['raised', 'cleared']),
  value: z.number().nullable(),
  threshold: z.number(),
  clearThreshold: z.number(),
  at: z.number(),
  recipients: z.array(z.string()).readonly(),
  // Absent from states saved before rules could be deleted with their alarms kept.
  ruleDeleted: z.boolean().default(false),
});

const outgoingSchema = z.object({ to: z.array(z.string()), subject: z.string(), text: z.string() });

/** What a policy holds between calls, as plain JSON. */
export const mailPolicyStateSchema = z.object({
  lastSent: z.array(z.tuple([z.number().int(), z.number()])),
  ready: z.array(mailItemSchema),
  readyFrom: z.number(),
  /** Per rule: the changes kept for its digest, and how many more came after them. */
  folded: z.array(z.tuple([z.number().int(), z.array(mailItemSchema), z.number().int().min(0)])),
  /** Mails the server did not take, with their tries so far; absent from states saved before retries. */
  retries: z.array(z.object({ mail: outgoingSchema, attempts: z.number().int().min(1), firstAt: z.number(), nextAt: z.number() })).default([]),
});
export type MailPolicyState = z.infer<typeof mailPolicyStateSchema>;

export interface OutgoingAlarmMail {
  to: string[];
  subject: string;
  text: string;
  /** On a mail tried again: its tries so far and when the first one failed. */
  retry?: { attempts: number; firstAt: number };
}

export interface MailPolicyOptions {
  /** ms between two mails about the same rule. */
  quietMs?: number;
  /** ms to wait for other changes before sending, so simultaneous ones share one mail. */
  gatherMs?: number;
  /** Where the app is reached (`https://fringewise.lab.example`), for links to bench pages; none without. */
  linkBase?: string | null;
  /** ms before the first retry of a mail the server did not take; each later wait doubles. */
  retryMs?: number;
}

export const DEFAULT_QUIET_MS = 10 * 60_000;
export const DEFAULT_GATHER_MS = 2_000;
/** Changes of one rule listed in a digest; later ones are only counted (a signal flapping every second). */
export const MAX_LISTED_PER_RULE = 100;
export const DEFAULT_RETRY_MS = 60_000;
const MAX_RETRY_WAIT_MS = 15 * 60_000;
/** A mail not taken for a day is given up: its alarm is on the bench page, and the news is old. */
export const MAX_RETRY_AGE_MS = 86_400_000;
/** Mails waiting for a retry; past this the oldest is given up (a mail server down for long). */
export const MAX_RETRIES = 100;

export class MailPolicy {
  private readonly quietMs: number;
  private readonly linkBase: string | null;
  private readonly gatherMs: number;
  private readonly lastSent = new Map<number, number>();
  private ready: MailItem[] = [];
  private readyFrom = 0;
  private readonly folded = new Map<number, { items: MailItem[]; more: number }>();
  private readonly retryMs: number;
  private retries: MailPolicyState['retries'] = [];

  constructor(opts: MailPolicyOptions = {}) {
    this.quietMs = opts.quietMs ?? DEFAULT_QUIET_MS;
    this.linkBase = opts.linkBase ?? null;
    this.gatherMs = opts.gatherMs ?? DEFAULT_GATHER_MS;
    this.retryMs = opts.retryMs ?? DEFAULT_RETRY_MS;
  }

  offer(item: MailItem, now: number): void {
    if (item.recipients.length === 0) return;
    // What still waits for this rule's mail goes out marked too, not as of a rule that is there.
    if (item.ruleDeleted) {
      const mark = (i: MailItem) => (i.ruleId === item.ruleId ? { ...i, ruleDeleted: true } : i);
      this.ready = this.ready.map(mark);
      const entry = this.folded.get(item.ruleId);
      if (entry) entry.items = entry.items.map(mark);
    }
    const last = this.lastSent.get(item.ruleId);
    const quiet = last !== undefined && now - last < this.quietMs;
    if (quiet || this.ready.some((r) => r.ruleId === item.ruleId)) {
      const entry = this.folded.get(item.ruleId) ?? { items: [], more: 0 };
      if (entry.items.length < MAX_LISTED_PER_RULE) entry.items.push(item);
      else entry.more++;
      this.folded.set(item.ruleId, entry);
      return;
    }
    if (this.ready.length === 0) this.readyFrom = now;
    this.ready.push(item);
  }

  /** Mails due at `now`; call it from a timer (every second is plenty). */
  due(now: number): OutgoingAlarmMail[] {
    const again = this.retries.filter((r) => r.nextAt <= now);
    this.retries = this.retries.filter((r) => r.nextAt > now);
    return [...again.map((r) => ({ ...r.mail, retry: { attempts: r.attempts, firstAt: r.firstAt } })), ...this.fresh(now)];
  }

  /**
   * Takes back a mail the server did not take, to be tried again later. False when it is given up
   * (failing for a day). The rule's quiet period still counts from the first try: a retry is that
   * same mail, not a new one.
   */
  failed(mail: OutgoingAlarmMail, now: number): boolean {
    const { retry, ...plain } = mail;
    const attempts = (retry?.attempts ?? 0) + 1;
    const firstAt = retry?.firstAt ?? now;
    if (now - firstAt >= MAX_RETRY_AGE_MS) return false;
    this.retries.push({ mail: plain, attempts, firstAt, nextAt: now + Math.min(this.retryMs * 2 ** (attempts - 1), MAX_RETRY_WAIT_MS) });
    if (this.retries.length > MAX_RETRIES) this.retries.sort((a, b) => a.firstAt - b.firstAt).splice(0, this.retries.length - MAX_RETRIES);
    return true;
  }

  private fresh(now: number): OutgoingAlarmMail[] {
    const items: { item: MailItem; folded: boolean; more: number }[] = [];
    if (this.ready.length > 0 && now - this.readyFrom >= this.gatherMs) {
      for (const item of this.ready) items.push({ item, folded: false, more: 0 });
      this.ready = [];
    }
    for (const [ruleId, entry] of this.folded) {
      const last = this.lastSent.get(ruleId);
      const inReady = this.ready.some((r) => r.ruleId === ruleId);
      if (!inReady && (last === undefined || now - last >= this.quietMs)) {
        entry.items.forEach((item, i) => items.push({ item, folded: true, more: i === 0 ? entry.more : 0 }));
        this.folded.delete(ruleId);
      }
    }
    if (items.length === 0) return [];
    for (const { item } of items) this.lastSent.set(item.ruleId, now);
    const groups = new Map<string, { item: MailItem; folded: boolean; more: number }[]>();
    for (const entry of items) {
      const key = [...entry.item.recipients].sort().join(',');
      groups.set(key, [...(groups.get(key) ?? []), entry]);
    }
    return [...groups.entries()].map(([key, group]) => {
      const to = key.split(',');
      const only = group[0]!;
      const more = group.reduce((n, g) => n + g.more, 0);
      return group.length === 1 && !only.folded ? { to, ...formatSingle(only.item, this.linkBase) } : { to, ...formatDigest(group.map((g) => g.item), this.quietMs, more, this.linkBase) };
    });
  }

  /** True while mail is waiting (the engine flushes it on shutdown). */
  pending(): boolean {
    return this.ready.length > 0 || this.folded.size > 0 || this.retries.length > 0;
  }

  state(): MailPolicyState {
    return {
      lastSent: [...this.lastSent],
      ready: [...this.ready],
      readyFrom: this.readyFrom,
      folded: [...this.folded].map(([rule, e]) => [rule, [...e.items], e.more]),
      retries: [...this.retries],
    };
  }

  /** Takes over a saved state (at start, before any offer). */
  restore(state: MailPolicyState): void {
    this.lastSent.clear();
    for (const [rule, at] of state.lastSent) this.lastSent.set(rule, at);
    this.ready = [...state.ready];
    this.readyFrom = state.readyFrom;
    this.folded.clear();
    for (const [rule, items, more] of state.folded) this.folded.set(rule, { items: [...items], more });
    this.retries = [...state.retries];
  }
}

function fmtValue(metric: AlarmMetric, v: number | null): string {
  if (v === null) return '—';
  const unit = METRIC_INFO[metric].unit;
  // Rates as on every screen (c/s, kc/s, Mc/s), so a mail and the bench page read alike.
  if (unit === 'counts/s') return formatRate(v);
  const digits = Math.abs(v) >= 100 ? 0 : Math.abs(v) >= 1 ? 2 : 4;
  return `${v.toFixed(digits)}${unit ? ' ' + unit : ''}`;
}

/** A mail's times: in UTC and said so, since its readers sit in any time zone. */
function when(ms: number): string {
  return new Date(ms).toISOString().replace('T', ' ').slice(0, 19) + ' UTC';
}

/** The rule, marked if deleted, and what the change is about. */
function about(item: MailItem): string {
  return `${ruleLabel(item.ruleName, item.ruleDeleted)}${item.subject ? ` (${item.subject})` : ''}`;
}

function describe(item: MailItem): string[] {
  const info = METRIC_INFO[item.metric];
  const word = info.direction === 'high' ? 'above' : 'below';
  const back = info.direction === 'high' ? 'below' : 'above';
  return [
    `Bench:     ${item.benchName} (${item.benchId})`,
    `Rule:      ${about(item)}`,
    `Metric:    ${info.label}`,
    `Severity:  ${item.severity}`,
    `Change:    ${item.change} at ${when(item.at)}`,
    `Value:     ${fmtValue(item.metric, item.value)}`,
    `Raises ${word} ${fmtValue(item.metric, item.threshold)}, clears ${back} ${fmtValue(item.metric, item.clearThreshold)}.`,
    ...(item.ruleDeleted ? ['The rule was deleted: nothing watches this any more, and an alarm it had raised was cleared with it. Its alarms stay on the bench page.'] : []),
  ];
}

/** A bench page's address, or null without a known base. */
function benchLink(benchId: string, linkBase: string | null | undefined): string | null {
  return linkBase ? `${linkBase.replace(/\/$/, '')}/benches/${encodeURIComponent(benchId)}` : null;
}

export function formatSingle(item: MailItem, linkBase?: string | null): { subject: string; text: string } {
  const link = benchLink(item.benchId, linkBase);
  return {
    subject: `[Fringewise] ${item.severity.toUpperCase()} ${item.change}: ${item.benchName} - ${about(item)}`,
    text: [...describe(item), '', link ? `Acknowledge it on the bench page: ${link}` : 'Acknowledge it on the bench page in Fringewise.'].join('\n'),
  };
}

/** `more`: changes after the listed ones, counted but not listed. */
export function formatDigest(items: MailItem[], quietMs = DEFAULT_QUIET_MS, more = 0, linkBase?: string | null): { subject: string; text: string } {
  const sorted = [...items].sort((a, b) => a.at - b.at);
  const raised = sorted.filter((i) => i.change === 'raised').length;
  const benches = [...new Set(sorted.map((i) => i.benchName))].join(', ');
  const worst = SEVERITY_ORDER.filter((s) => sorted.some((i) => i.severity === s)).pop() ?? 'info';
  const rules = [...new Set(sorted.map((i) => ruleLabel(i.ruleName, i.ruleDeleted)))];
  const named = rules.slice(0, 3).join(', ') + (rules.length > 3 ? ` and ${rules.length - 3} more` : '');
  const lines = sorted.map(
    (i) => `${when(i.at)}  ${i.change.padEnd(7)}  ${i.severity.padEnd(8)}  ${i.benchName} — ${about(i)}: ${fmtValue(i.metric, i.value)}`,
  );
  return {
    subject: `[Fringewise] ${worst.toUpperCase()} digest: ${sorted.length + more} alarm changes (${raised}${more ? ' listed' : ''} raised) - ${named} on ${benches}`,
    text: [
      `${sorted.length + more} alarm changes, oldest first. Changes of one rule within ${Math.round(quietMs / 60_000)} min of its last mail are gathered here rather than sent one by one.`,
      '',
      ...lines,
      ...(more ? ['', `… and ${more} later changes, not listed here: every one is on the bench pages.`] : []),
      '',
      'Acknowledge them on the bench pages in Fringewise.',
      ...[...new Map(sorted.map((i) => [i.benchId, i.benchName])).entries()].flatMap(([id, name]) => {
        const link = benchLink(id, linkBase);
        return link ? [`  ${name}: ${link}`] : [];
      }),
    ].join('\n'),
  };
}
