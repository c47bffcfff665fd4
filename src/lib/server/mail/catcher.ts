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
  return decodeWords((re.exec(raw)?.[1] ?? '').replace(/\r?\n[ \t]+/g, ' ').trim());
}

const ENCODED_WORD = /=\?([^?\s]+)\?([BbQq])\?([^?\s]*)\?=/g;

/**
 * RFC 2047 encoded words back to text: nodemailer writes a header beyond ASCII (a bench named
 * "Mach–Zehnder", a rule about Δφ) as `=?UTF-8?Q?…?=` words. The white space between two
 * adjacent words is no part of the text (§6.2), and a character's bytes may be split across words,
 * so each run of adjacent words is decoded as one.
 */
function decodeWords(value: string): string {
  return value.replace(/=\?[^?\s]+\?[BbQq]\?[^?\s]*\?=(?:\s*=\?[^?\s]+\?[BbQq]\?[^?\s]*\?=)*/g, (run) => {
    const words = [...run.matchAll(ENCODED_WORD)];
    const bytes = Buffer.concat(
      words.map(([, , enc, body]) =>
        enc!.toUpperCase() === 'B' ? Buffer.from(body!, 'base64') : Buffer.from(body!.replace(/_/g, ' ').replace(/=([0-9A-F]{2})/gi, (_, h: string) => String.fromCharCode(parseInt(h, 16))), 'latin1'),
      ),
    );
    try {
      return new TextDecoder(words[0]![1]!, { fatal: true }).decode(bytes);
    } catch {
      return run;
    }
  });
}

/** Best-effort readable body: the text/plain part, quoted-printable or base64 decoded. */
function plainText(raw: string): string {
  const split = raw.search(/\r?\n\r?\n/);
  const body = split >= 0 ? raw.slice(split).replace(/^\r?\n\r?\n/, '') : raw;
  const boundary = /boundary="?([^";\r\n]+)"?/i.exec(raw)?.[1];
  let part = body;
  let headers = raw.slice(0, split);
  if (boundary) {
    const parts = body.split('--' + boundary);
    const textPart = parts.find((p) => /content-type:\s*text\/plain/i.test(p)) ?? parts[1] ?? '';
    const cut = textPart.search(/\r?\n\r?\n/);
    headers = textPart.slice(0, cut);
    part = cut >= 0 ? textPart.slice(cut).trim() : textPart;
  }
  if (/content-transfer-encoding:\s*quoted-printable/i.test(headers)) {
    part = part.replace(/=\r?\n/g, '').replace(/=([0-9A-F]{2})/gi, (_, h: string) => String.fromCharCode(parseInt(h, 16)));
    part = Buffer.from(part, 'latin1').toString('utf8');
  } else if (/content-transfer-encoding:\s*base64/i.test(headers)) {
    // What nodemailer sends when most of the text is beyond ASCII.
    part = Buffer.from(part, 'base64').toString('utf8');
  }
  // SMTP carries lines ended by CRLF; the page shows them as written.
  return part.replace(/\r\n/g, '\n').trim();
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
