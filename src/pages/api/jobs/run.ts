import type { APIRoute } from 'astro';
import { db, pool } from '../../../lib/server/db';
import { handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { runAllDueWork } from '../../../lib/server/job-log';
import { tripMailHandler } from '../../../lib/server/trip-mail';
import { createMailTransport } from '../../../lib/server/mail';
import { insertAuditEntry } from '../../../lib/server/audit';

/**
 * Run all due work now (what the scheduler and its mail worker do) and return the summary:
 * `passes` (stale predictions recomputed), `jobs` (each spacecraft's analysis), `mail` (one round).
 */
export const POST: APIRoute = handle(async ({ locals }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const transport = createMailTransport();
  try {
    const summary = await runAllDueWork(db, pool, { onTripChange: tripMailHandler, transport });
    await insertAuditEntry(db, {
      actorId: user.id,
      action: 'jobs.run',
      targetType: 'job',
      targetId: 'all',
      detail: { spacecraft: summary.jobs.length, passesRecomputed: summary.passes.recomputed.length, mailSent: summary.mail?.sent ?? 0 },
    });
    return json(summary);
  } finally {
    transport.close();
  }
});
