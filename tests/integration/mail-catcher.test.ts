// The local mail catcher keeps what nodemailer sends readable on the outbox page: a subject beyond
// ASCII arrives as RFC 2047 encoded words, a body mostly beyond ASCII as base64 (nodemailer picks
// quoted-printable or base64 by the share of such characters).
import { desc, sql } from 'drizzle-orm';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { closeDb, getDb } from '../../src/lib/server/db/index.ts';
import { caughtMail } from '../../src/lib/server/db/schema.ts';
import { startMailCatcher, type MailCatcher } from '../../src/lib/server/mail/catcher.ts';
import { sendMail } from '../../src/lib/server/mail/send.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
let catcher: MailCatcher;

beforeAll(async () => {
  delete process.env['SMTP_URL'];
  catcher = await startMailCatcher(0);
  process.env['FRINGEWISE_CATCHER_URL'] = catcher.url;
});
afterAll(async () => {
  await catcher?.close();
  await closeDb();
});

async function caught(to: string) {
  const [row] = await getDb().select().from(caughtMail).where(sql`${to} = any(${caughtMail.to})`).orderBy(desc(caughtMail.id)).limit(1);
  return row!;
}

it('shows a subject and a body beyond ASCII as they were written', async () => {
  const to = `utf-${tag}@lab.example`;
  // Long enough that the subject is folded over several encoded words.
  const subject = '[Fringewise] CRITICAL raised: Mach–Zehnder λ/2 bench, 780 nm - Δφ drift above 20 mrad/s (Ölfleck on the beam splitter)';
  const text = 'Φάση: Δφ = 0,3 rad/s — συμβολόμετρο Mach–Zehnder';
  await sendMail({ to, subject, text });
  const mail = await caught(to);
  expect(mail.subject).toBe(subject);
  expect(mail.text).toBe(text);
});

it('keeps a plain ASCII subject and body as they were', async () => {
  const to = `ascii-${tag}@lab.example`;
  const subject = '[Fringewise] INFO raised: Fibre MZ, 1550 nm - DEMO ALARM, trips on purpose: phase drift above 20 mrad/s (this fibre is unenclosed)';
  await sendMail({ to, subject, text: 'Bench:     Fibre MZ, 1550 nm (mz-1550)\nValue:     0.0300 rad/s' });
  const mail = await caught(to);
  expect(mail.subject).toBe(subject);
  expect(mail.text).toBe('Bench:     Fibre MZ, 1550 nm (mz-1550)\nValue:     0.0300 rad/s');
});
