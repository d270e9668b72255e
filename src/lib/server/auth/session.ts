import type { AstroCookies } from 'astro';
import { z } from 'zod';
import { lucia } from './lucia';

export const signInInputSchema = z.object({
  email: z.string().trim().min(1, 'Enter your e-mail address.').email('Enter a valid e-mail address.'),
  password: z.string().min(1, 'Enter your password.').max(200, 'That password is too long.'),
});
export type SignInInput = z.infer<typeof signInInputSchema>;

/** Open a session for the user and set its cookie. */
export async function startSession(cookies: AstroCookies, userId: string): Promise<void> {
  const session = await lucia.createSession(userId, {});
  const c = lucia.createSessionCookie(session.id);
  cookies.set(c.name, c.value, c.attributes);
}

/** End the session (if any) and blank the cookie. */
export async function endSession(cookies: AstroCookies, sessionId: string | null): Promise<void> {
  if (sessionId) await lucia.invalidateSession(sessionId);
  const c = lucia.createBlankSessionCookie();
  cookies.set(c.name, c.value, c.attributes);
}

const PROBE_BASE = 'http://x.invalid';

/**
 * Only same-origin paths may be a post-sign-in destination. Browsers read a backslash as a slash
 * and drop tabs and newlines inside a URL, so `/\evil.example` or `/<tab>/evil.example` would
 * leave the site; anything with a backslash or a control character is refused outright, and what
 * is left must resolve against a probe base without changing its origin.
 */
export function safeNext(next: string | null | undefined): string {
  if (!next || !next.startsWith('/') || next.startsWith('//')) return '/';
  if (/[\\\u0000-\u001f\u007f]/.test(next)) return '/';
  let url: URL;
  try {
    url = new URL(next, PROBE_BASE);
  } catch {
    return '/';
  }
  return url.origin === PROBE_BASE ? next : '/';
}
