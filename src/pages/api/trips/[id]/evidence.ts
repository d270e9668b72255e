import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseWith } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { loadEvidence } from '../../../../lib/server/casefile';
import { evidenceQuerySchema } from '../../../../features/casefile/casefile.schema';

/** The Casefile's evidence series of a trip: ?from=&to= (ISO, default around the trip), &points= (LTTB target), &loop=. */
export const GET: APIRoute = handle(async ({ locals, params, url }) => {
  requireRole(locals);
  const id = idParam('id', params.id);
  const q = parseWith(evidenceQuerySchema, Object.fromEntries(url.searchParams), 'query');
  return json(await loadEvidence(db, id, q));
});
