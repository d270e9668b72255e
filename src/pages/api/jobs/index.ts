import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { listJobRuns } from '../../../lib/server/job-log';

export const GET: APIRoute = handle(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json({ runs: await listJobRuns(db) });
});
