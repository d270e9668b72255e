import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { resolveTrip } from '../../../../lib/server/trips';
import { resolveInputSchema } from '../../../../lib/trips.schema';

/** Resolve with a conclusion; which roles may resolve which kinds is RESOLVE_RULE. */
export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'operator', 'analyst', 'engineer', 'admin');
  const input = await parseBody(resolveInputSchema, request);
  return json({ trip: await resolveTrip(db, idParam('id', params.id), user, input.resolution) });
});
