import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseWith } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { listTrips } from '../../../lib/server/trips';
import { tripQuerySchema } from '../../../lib/trips.schema';

export const GET: APIRoute = handle(async ({ locals, url }) => {
  requireRole(locals);
  const q = parseWith(tripQuerySchema, Object.fromEntries(url.searchParams), 'query');
  return json(await listTrips(db, q));
});
