import { ApiError } from './http';

/** What the page says after a refused request, beside the server's own message: what to do next. */
export interface AdviceText {
  /** For 403: who may do this. */
  forbidden: string;
  /** For 404 (default: the list changed since it was read). */
  notFound?: string;
  /** For 409, when the server's message says it all already (default: the generic advice). */
  conflict?: string;
}

/** The next step for the user after `err`, in the words of the page. */
export function adviceFor(err: unknown, text: AdviceText): string {
  if (!(err instanceof ApiError)) return 'Reload the page and try again.';
  if (err.status === 401) return 'Your session has ended: sign in again, then repeat.';
  if (err.status === 403) return text.forbidden;
  if (err.status === 404) return text.notFound ?? 'Reload the page: the list has changed since it was read.';
  if (err.status === 0) return 'Check that Millrace is reachable and try again.';
  if (err.status === 409 && text.conflict !== undefined) return text.conflict;
  return 'Correct what the message names and try again.';
}
