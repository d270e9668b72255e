import { hash, verify } from '@node-rs/argon2';

// Argon2id with the OWASP password-storage cheat sheet's minimum (19 MiB, 2 passes, 1 lane).
const OPTIONS = { memoryCost: 19456, timeCost: 2, parallelism: 1, outputLen: 32 } as const;

/** Hash a password for storage. */
export function hashPassword(password: string): Promise<string> {
  return hash(password, OPTIONS);
}

/** Check a password against a stored hash; false for a malformed hash. */
export async function verifyPassword(storedHash: string, password: string): Promise<boolean> {
  try {
    return await verify(storedHash, password);
  } catch {
    return false;
  }
}

/** A password policy the forms and the API share. */
export function passwordProblem(password: string): string | null {
  if (password.length < 10) return 'Use at least 10 characters.';
  if (password.length > 200) return 'Use at most 200 characters.';
  return null;
}
