import type { APIRoute } from 'astro';
import { HttpError, handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { mailboxDir, readMailboxMessage, requireDemoMailbox } from '../../../lib/server/mail/mailbox';

/** One received message, parsed: headers, plain text and HTML (demo mode only). */
export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals, 'admin');
  requireDemoMailbox();
  const message = await readMailboxMessage(mailboxDir(), params.id ?? '');
  if (!message) throw new HttpError('NOT_FOUND', `Mailbox has no message ${params.id ?? ''}.`);
  return json(message);
});
