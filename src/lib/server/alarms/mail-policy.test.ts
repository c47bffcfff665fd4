import { describe, expect, it } from 'vitest';
import { MAX_RETRY_AGE_MS, MailPolicy, mailPolicyStateSchema, type MailItem } from './mail-policy.ts';

const base: MailItem = {
  ruleId: 1,
  ruleName: 'Detector A overexposed',
  benchId: 'mz-1',
  benchName: 'Mach–Zehnder 1',
  metric: 'rate_high',
  subject: 'gw-1/a',
  severity: 'critical',
  change: 'raised',
  value: 2.5e6,
  threshold: 2e6,
  clearThreshold: 1.5e6,
  at: 0,
  recipients: ['night@lab.example'],
  ruleDeleted: false,
};

describe('alarm mail policy', () => {
  it('sends one mail after the gather time, with the rule, value and limits', () => {
    const p = new MailPolicy();
    p.offer(base, 0);
    expect(p.due(1_000)).toEqual([]);
    const [mail, ...rest] = p.due(2_000);
    expect(rest).toEqual([]);
    expect(mail!.to).toEqual(['night@lab.example']);
    expect(mail!.subject).toContain('CRITICAL raised');
    expect(mail!.subject).toContain('Detector A overexposed');
    expect(mail!.text).toContain('2.50 Mc/s');
    expect(mail!.text).toContain('Raises above 2.00 Mc/s, clears below 1.50 Mc/s');
    expect(mail!.text).toContain('at 1970-01-01 00:00:00 UTC');
    // With the app's address known, the mail links the bench page.
    const linked = new MailPolicy({ linkBase: 'https://fringewise.lab.example/' });
    linked.offer(base, 0);
    expect(linked.due(2_000)[0]!.text).toContain('bench page: https://fringewise.lab.example/benches/mz-1');
  });

  it('folds a flapping rule into one digest per quiet period', () => {
    const p = new MailPolicy({ quietMs: 600_000, gatherMs: 2_000 });
    const sent: string[] = [];
    for (let t = 0; t <= 1_200_000; t += 1_000) {
      // Raise/clear every 5 s for 20 minutes: 480 changes.
      if (t % 5_000 === 0) p.offer({ ...base, change: (t / 5_000) % 2 ? 'cleared' : 'raised', at: t }, t);
      for (const m of p.due(t)) sent.push(m.subject);
    }
    expect(sent.length).toBeLessThanOrEqual(3);
    expect(sent[0]).toContain('raised');
    expect(sent[1]).toContain('digest');
  });

  it('lists at most a hundred changes of one rule in a digest and counts the rest', () => {
    const p = new MailPolicy({ quietMs: 600_000, gatherMs: 2_000 });
    const mails: { subject: string; text: string }[] = [];
    // Every second for 10 minutes: the first three (one gather window) at once, then 597 changes
    // wait for the digest at the end of the quiet period.
    let waiting = 0;
    for (let t = 0; t <= 700_000; t += 1_000) {
      if (t < 600_000) p.offer({ ...base, change: (t / 1_000) % 2 ? 'cleared' : 'raised', at: t }, t);
      if (t === 599_000) waiting = JSON.stringify(p.state()).length;
      mails.push(...p.due(t));
    }
    expect(mails).toHaveLength(2);
    expect(mails[1]!.subject).toContain('597 alarm changes');
    expect(mails[1]!.text).toContain('and 497 later changes, not listed');
    expect(mails[1]!.text.split('\n').filter((l) => / (raised|cleared) /.test(l))).toHaveLength(100);
    expect(waiting).toBeLessThan(60_000); // what waits stays bounded, however long the flapping
  });

  it('sends one digest per recipient list when many rules fire together', () => {
    const p = new MailPolicy();
    for (let i = 1; i <= 5; i++) p.offer({ ...base, ruleId: i, ruleName: `Rule ${i}` }, 0);
    p.offer({ ...base, ruleId: 9, recipients: ['other@lab.example'] }, 500);
    const mails = p.due(2_000);
    expect(mails).toHaveLength(2);
    const digest = mails.find((m) => m.to[0] === 'night@lab.example')!;
    expect(digest.subject).toContain('5 alarm changes');
    for (let i = 1; i <= 5; i++) expect(digest.text).toContain(`Rule ${i}`);
  });

  it('sends nothing for rules without recipients', () => {
    const p = new MailPolicy();
    p.offer({ ...base, recipients: [] }, 0);
    expect(p.due(10_000)).toEqual([]);
    expect(p.pending()).toBe(false);
  });

  it('resumes from a saved state as if it had never stopped (a restart loses no digest)', () => {
    const run = (restartAt: number | null) => {
      let p = new MailPolicy({ quietMs: 600_000, gatherMs: 2_000 });
      const sent: string[] = [];
      for (let t = 0; t <= 900_000; t += 1_000) {
        if (t === restartAt) {
          // Through JSON and the schema, as the engine keeps it in the settings table.
          const saved = mailPolicyStateSchema.parse(JSON.parse(JSON.stringify(p.state())));
          p = new MailPolicy({ quietMs: 600_000, gatherMs: 2_000 });
          p.restore(saved);
        }
        if (t % 30_000 === 0 && t <= 300_000) p.offer({ ...base, change: (t / 30_000) % 2 ? 'cleared' : 'raised', at: t }, t);
        for (const m of p.due(t)) sent.push(`${t} ${m.subject}`);
      }
      return sent;
    };
    const uninterrupted = run(null);
    expect(uninterrupted).toHaveLength(2); // the first change at once, the rest as one digest
    expect(run(400_000)).toEqual(uninterrupted);
    expect(run(1_000)).toEqual(uninterrupted);
  });
  it('tries a mail the server did not take again, waiting longer each time, for up to a day', () => {
    const p = new MailPolicy({ retryMs: 60_000 });
    p.offer(base, 0);
    const [mail] = p.due(2_000);
    expect(p.failed(mail!, 2_000)).toBe(true);
    expect(p.due(61_000)).toEqual([]);
    const [again] = p.due(62_000);
    expect(again).toMatchObject({ subject: mail!.subject, text: mail!.text, retry: { attempts: 1, firstAt: 2_000 } });
    expect(p.failed(again!, 62_000)).toBe(true);
    expect(p.due(181_000)).toEqual([]);
    // The wait survives a restart.
    const restored = new MailPolicy({ retryMs: 60_000 });
    restored.restore(mailPolicyStateSchema.parse(JSON.parse(JSON.stringify(p.state()))));
    const [third] = restored.due(182_000);
    expect(third!.retry).toEqual({ attempts: 2, firstAt: 2_000 });
    // A day after the first try it is given up.
    expect(restored.failed({ ...third!, retry: { attempts: 40, firstAt: 2_000 } }, 2_000 + MAX_RETRY_AGE_MS)).toBe(false);
    expect(restored.pending()).toBe(false);
  });

  it('reads a state saved before retries existed', () => {
    const old = { lastSent: [[1, 5]], ready: [], readyFrom: 0, folded: [] };
    expect(mailPolicyStateSchema.parse(old).retries).toEqual([]);
  });
  it('says when an alarm ended because its rule was deleted, and marks the rule so in a digest', () => {
    const p = new MailPolicy({ quietMs: 600_000, gatherMs: 2_000 });
    const deleted: MailItem = { ...base, change: 'cleared', value: null, at: 60_000, ruleDeleted: true };
    p.offer(deleted, 60_000);
    const [single] = p.due(62_000);
    expect(single!.subject).toContain('Detector A overexposed (deleted rule)');
    expect(single!.text).toContain('The rule was deleted');
    // A raise waiting for its rule's digest when the rule is deleted is sent marked too.
    p.offer({ ...base, at: 100_000 }, 100_000);
    p.offer({ ...deleted, at: 200_000 }, 200_000);
    const [digest] = p.due(662_000);
    expect(digest!.text.split('\n').filter((l) => l.includes('Detector A overexposed (deleted rule)'))).toHaveLength(2);
    // States saved before the flag existed read as rules still there.
    const old = { lastSent: [], ready: [{ ...base }], readyFrom: 0, folded: [] };
    expect(mailPolicyStateSchema.parse(old).ready[0]!.ruleDeleted).toBe(false);
  });
});
