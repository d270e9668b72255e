import type { APIRoute } from 'astro';
import { db, pool } from '../../../../lib/server/db';
import { handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { reingestUpload } from '../../../../lib/server/uploads';

export const POST: APIRoute = handle(async ({ locals, params }) => {
  const user = requireRole(locals, 'operator', 'engineer', 'admin');
  return json(await reingestUpload(pool, db, idParam('id', params.id), user.id));
});
