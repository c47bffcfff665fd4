import { hash, verify } from '@node-rs/argon2';

// argon2id with the OWASP-recommended minimum (19 MiB, 2 passes, 1 lane).
const OPTIONS = { memoryCost: 19_456, timeCost: 2, outputLen: 32, parallelism: 1 } as const;

export const MIN_PASSWORD_LENGTH = 10;

export async function hashPassword(password: string): Promise<string> {
  return await hash(password, OPTIONS);
}

export async function verifyPassword(passwordHash: string, password: string): Promise<boolean> {
  try {
    return await verify(passwordHash, password);
  } catch {
    return false;
  }
}

// Verifying against this when the account does not exist keeps the timing of "unknown user" and
// "wrong password" alike.
let dummyHash: Promise<string> | undefined;
export function dummyPasswordHash(): Promise<string> {
  dummyHash ??= hashPassword('not-a-real-password-' + Math.random());
  return dummyHash;
}
