import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { acknowledgeTrip } from '../../../../lib/server/trips';
import { acknowledgeInputSchema } from '../../../../lib/trips.schema';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'operator', 'analyst', 'engineer', 'admin');
  const input = await parseBody(acknowledgeInputSchema, request);
  return json({ trip: await acknowledgeTrip(db, idParam('id', params.id), user, input.note) });
});
