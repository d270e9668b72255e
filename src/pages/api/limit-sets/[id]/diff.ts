import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { limitSetDiff } from '../../../../lib/server/limit-review';

export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals);
  return json(await limitSetDiff(db, idParam('id', params.id)));
});
