import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../lib/server/params';
import { listUploads } from '../../../lib/server/uploads';

export const GET: APIRoute = handle(async ({ locals, url }) => {
  requireRole(locals);
  const key = url.searchParams.get('spacecraft');
  const sc = key ? await spacecraftFromParam(db, key) : undefined;
  return json({ uploads: await listUploads(db, sc?.id) });
});
