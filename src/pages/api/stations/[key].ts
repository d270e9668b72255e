import type { APIRoute } from 'astro';
import { z } from 'zod';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody, parseWith } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { deleteStation, updateStation } from '../../../lib/server/stations';
import { recomputePasses } from '../../../lib/server/passes';
import { stationKeySchema, updateStationInputSchema } from '../../../features/stations/stations.schema';

const keyOf = (key: string | undefined) => parseWith(z.object({ key: stationKeySchema }), { key }, 'station key').key;

/** Change a ground station (engineer or admin); passes are recomputed in the same transaction. */
export const PATCH: APIRoute = handle(async ({ request, locals, params }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const key = keyOf(params.key);
  const patch = await parseBody(updateStationInputSchema, request);
  const out = await db.transaction().execute(async (trx) => {
    const station = await updateStation(trx, key, patch, user.id);
    const passes = await recomputePasses(trx);
    return { station, passes: { upcoming: passes.reduce((n, p) => n + p.upcoming, 0) } };
  });
  return json(out);
});

/** Delete a ground station nothing was received through (engineer or admin). */
export const DELETE: APIRoute = handle(async ({ locals, params }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const key = keyOf(params.key);
  await db.transaction().execute(async (trx) => {
    await deleteStation(trx, key, user.id);
    await recomputePasses(trx);
  });
  return json({ deleted: key });
});
