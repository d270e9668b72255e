import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { insertStation, listStations } from '../../../lib/server/stations';
import { recomputePasses, refreshPassesIfStale } from '../../../lib/server/passes';
import { createStationInputSchema } from '../../../features/stations/stations.schema';

/** Every ground station with its use. */
export const GET: APIRoute = handle(async ({ locals }) => {
  requireRole(locals);
  await refreshPassesIfStale(db);
  return json({ stations: await listStations(db) });
});

/** Add a ground station (engineer or admin); passes are recomputed in the same transaction. */
export const POST: APIRoute = handle(async ({ request, locals }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const input = await parseBody(createStationInputSchema, request);
  const out = await db.transaction().execute(async (trx) => {
    const station = await insertStation(trx, input, user.id);
    const passes = await recomputePasses(trx);
    return { station, passes: { upcoming: passes.reduce((n, p) => n + p.upcoming, 0) } };
  });
  return json(out, 201);
});
