import { createHash, randomBytes } from 'node:crypto';

/** A fresh 256-bit secret for tokens and one-time links, URL-safe. */
export function newSecret(prefix = ''): string {
  return prefix + randomBytes(32).toString('base64url');
}

/** Tokens are high-entropy random, so SHA-256 is enough to store them and allows indexed lookup. */
export function hashSecret(secret: string): string {
  return createHash('sha256').update(secret).digest('hex');
}

export function newId(): string {
  return randomBytes(12).toString('base64url');
}
