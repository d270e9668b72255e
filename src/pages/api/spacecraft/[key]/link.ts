import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../../lib/server/params';
import { findLinkView } from '../../../../lib/server/link';

/** The ground link of one spacecraft: recent ingest batches, open sequence gaps, quarantine. */
export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals);
  const sc = await spacecraftFromParam(db, params.key);
  return json(await findLinkView(db, sc.id));
});
