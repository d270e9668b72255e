import type { APIRoute } from 'astro';
import { db, pool } from '../../../lib/server/db';
import { handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../lib/server/params';
import { resolveStation } from '../../../lib/server/ingest';
import { receivePacketUpload } from '../../../lib/server/uploads';
import { config } from '../../../lib/server/config';

/** Upload a recorded pass file (multipart field `file`); ?spacecraft=KEY&station=KEY. Streamed, never read whole. */
export const POST: APIRoute = handle(async ({ request, locals, url }) => {
  const user = requireRole(locals, 'operator', 'engineer', 'admin');
  const sc = await spacecraftFromParam(db, url.searchParams.get('spacecraft'));
  const stationId = await resolveStation(db, url.searchParams.get('station'));
  const report = await receivePacketUpload(pool, db, request, { spacecraftId: sc.id, stationId, actorId: user.id, dir: config().UPLOAD_DIR });
  return json(report, 201);
});
