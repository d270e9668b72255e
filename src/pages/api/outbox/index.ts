import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseWith } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { outboxView, outboxQuerySchema } from '../../../lib/server/mail/outbox';

/** Outbox rows (newest first), counts per state and the caution trips waiting for a digest. */
export const GET: APIRoute = handle(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const q = parseWith(outboxQuerySchema, Object.fromEntries(url.searchParams), 'query');
  return json(await outboxView(db, q));
});
