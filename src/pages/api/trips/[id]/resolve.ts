import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { resolveWithConclusion } from '../../../../lib/server/casefile';
import { resolveWithConclusionSchema } from '../../../../features/casefile/casefile.schema';

/**
 * Resolve with the Casefile's conclusion: `{conclusion}` (saved to the Casefile first; `resolution`
 * is accepted as the older name) or, without one, the conclusion saved before. Which roles may
 * resolve which kinds is RESOLVE_RULE.
 */
export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'operator', 'analyst', 'engineer', 'admin');
  const input = await parseBody(resolveWithConclusionSchema, request);
  return json({ trip: await resolveWithConclusion(db, idParam('id', params.id), user, input.conclusion ?? input.resolution) });
});
