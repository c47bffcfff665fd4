/** The local mail catcher runs (and its outbox page exists) only when no real SMTP server is configured. */
export function mailCatcherEnabled(): boolean {
  return !process.env['SMTP_URL'];
}
