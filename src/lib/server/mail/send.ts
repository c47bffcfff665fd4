import nodemailer, { type Transporter } from 'nodemailer';

export interface OutgoingMail {
  to: string | string[];
  subject: string;
  text: string;
}

const FROM = process.env['MAIL_FROM'] ?? 'Fringewise <fringewise@localhost>';

const KEY = Symbol.for('fringewise.mailer');
type Holder = { [KEY]?: { url: string; transport: Transporter } };

/** Where mail goes: SMTP_URL, or the local catcher whose address the entry put in FRINGEWISE_CATCHER_URL. */
function transportUrl(): string {
  const url = process.env['SMTP_URL'] ?? process.env['FRINGEWISE_CATCHER_URL'];
  if (!url) throw new Error('no mail server: set SMTP_URL (the local catcher starts with `npm start`)');
  return url;
}

function transport(): Transporter {
  const holder = globalThis as Holder;
  const url = transportUrl();
  if (holder[KEY]?.url !== url) holder[KEY] = { url, transport: nodemailer.createTransport(url) };
  return holder[KEY].transport;
}

export async function sendMail(mail: OutgoingMail): Promise<void> {
  await transport().sendMail({ from: FROM, to: mail.to, subject: mail.subject, text: mail.text });
}
