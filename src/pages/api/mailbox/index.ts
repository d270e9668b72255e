import type { APIRoute } from 'astro';
import { handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { listMailbox, mailboxDir, requireDemoMailbox } from '../../../lib/server/mail/mailbox';

/** The messages the local relay has received, newest first (demo mode only). */
export const GET: APIRoute = handle(async ({ locals }) => {
  requireRole(locals, 'admin');
  requireDemoMailbox();
  return json({ messages: await listMailbox(mailboxDir()) });
});
