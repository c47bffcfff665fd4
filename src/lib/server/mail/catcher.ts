// The local mail catcher: an SMTP server on loopback that keeps every message in the database,
// so invitations and alarms can be read on the admin's outbox page when no real SMTP is set.
import { SMTPServer } from 'smtp-server';
import { getDb } from '../db/index.ts';
import { caughtMail } from '../db/schema.ts';

export interface MailCatcher {
  port: number;
  url: string;
  close(): Promise<void>;
}

const MAX_MESSAGE_BYTES = 2 * 1024 * 1024;

function header(raw: string, name: string): string {
  const re = new RegExp(`^${name}:\\s*(.*(?:\\r?\\n[ \\t].*)*)`, 'im');
  return (re.exec(raw)?.[1] ?? '').replace(/\r?\n[ \t]+/g, ' ').trim();
}

/** Best-effort readable body: the text/plain part, quoted-printable decoded. */
function plainText(raw: string): string {
  const split = raw.search(/\r?\n\r?\n/);
  const body = split >= 0 ? raw.slice(split).replace(/^\r?\n\r?\n/, '') : raw;
  const boundary = /boundary="?([^";\r\n]+)"?/i.exec(raw)?.[1];
  let part = body;
  let qp = /content-transfer-encoding:\s*quoted-printable/i.test(raw.slice(0, split));
  if (boundary) {
    const parts = body.split('--' + boundary);
    const textPart = parts.find((p) => /content-type:\s*text\/plain/i.test(p)) ?? parts[1] ?? '';
    const cut = textPart.search(/\r?\n\r?\n/);
    qp = /content-transfer-encoding:\s*quoted-printable/i.test(textPart.slice(0, cut));
    part = cut >= 0 ? textPart.slice(cut).trim() : textPart;
  }
  if (qp) {
    part = part.replace(/=\r?\n/g, '').replace(/=([0-9A-F]{2})/gi, (_, h: string) => String.fromCharCode(parseInt(h, 16)));
    part = Buffer.from(part, 'latin1').toString('utf8');
  }
  return part.trim();
}

export async function startMailCatcher(port = 0): Promise<MailCatcher> {
  const server = new SMTPServer({
    secure: false,
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    size: MAX_MESSAGE_BYTES,
    logger: false,
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (c: Buffer) => chunks.push(c));
      stream.on('end', () => {
        const raw = Buffer.concat(chunks).toString('utf8');
        getDb()
          .insert(caughtMail)
          .values({
            from: session.envelope.mailFrom ? session.envelope.mailFrom.address : '',
            to: session.envelope.rcptTo.map((r) => r.address),
            subject: header(raw, 'Subject'),
            text: plainText(raw),
            raw,
          })
          .then(() => callback(), (err: Error) => callback(err));
      });
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(port, '127.0.0.1', () => resolve());
  });
  const addr = server.server.address();
  const actual = typeof addr === 'object' && addr ? addr.port : port;
  return { port: actual, url: `smtp://127.0.0.1:${actual}`, close: () => new Promise((r) => server.close(() => r())) };
}
