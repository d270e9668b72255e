import type { APIRoute } from 'astro';
import { db } from '../../../../../lib/server/db';
import { HttpError, handle, json } from '../../../../../lib/server/http';
import { requireRole } from '../../../../../lib/server/auth/require';
import { idParam, spacecraftFromParam } from '../../../../../lib/server/params';
import { revokeIngestToken } from '../../../../../lib/server/ingest-tokens';

export const DELETE: APIRoute = handle(async ({ locals, params }) => {
  const user = requireRole(locals, 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  const id = idParam('id', params.id);
  const ok = await db.transaction().execute((trx) => revokeIngestToken(trx, sc.id, id, user.id));
  if (!ok) throw new HttpError('NOT_FOUND', `Spacecraft ${sc.key} has no live token ${id}.`);
  return json({ revoked: id });
});
