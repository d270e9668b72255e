import type { APIRoute } from 'astro';
import { db } from '../../lib/server/db';
import { handle, json, parseWith } from '../../lib/server/http';
import { requireRole } from '../../lib/server/auth/require';
import { listAuditLog } from '../../lib/server/people';
import { auditQuerySchema } from '../../features/audit/audit.schema';

/** Who changed what and when, newest first, with the filters' choices (admin). */
export const GET: APIRoute = handle(async ({ locals, url }) => {
  requireRole(locals, 'admin');
  const q = parseWith(auditQuerySchema, Object.fromEntries(url.searchParams), 'query');
  return json(await listAuditLog(db, q));
});
