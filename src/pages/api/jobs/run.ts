import type { APIRoute } from 'astro';
import { db, pool } from '../../../lib/server/db';
import { handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { runDueJobs } from '../../../lib/server/analysis-job';
import { tripMailHandler } from '../../../lib/server/trip-mail';
import { insertAuditEntry } from '../../../lib/server/audit';

/** Run all due work now (what the scheduler does every minute) and return the summary. */
export const POST: APIRoute = handle(async ({ locals }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const summaries = await runDueJobs(db, pool, { onTripChange: tripMailHandler });
  await insertAuditEntry(db, { actorId: user.id, action: 'jobs.run', targetType: 'job', targetId: 'analysis', detail: { spacecraft: summaries.length } });
  return json({ jobs: summaries });
});
