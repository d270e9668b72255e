import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { HttpError, handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam, spacecraftFromParam } from '../../../../lib/server/params';
import { removeOnCallShift } from '../../../../lib/server/mail/roster';

/** Take a shift off the roster (operator or admin). */
export const DELETE: APIRoute = handle(async ({ locals, params }) => {
  const user = requireRole(locals, 'operator', 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  const id = idParam('id', params.id);
  const ok = await db.transaction().execute((trx) => removeOnCallShift(trx, sc.id, id, user.id));
  if (!ok) throw new HttpError('NOT_FOUND', `Spacecraft ${sc.key} has no on-call shift ${id}.`);
  return json({ removed: id });
});
