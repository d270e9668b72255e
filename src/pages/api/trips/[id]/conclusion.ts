import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { saveConclusion } from '../../../../lib/server/casefile';
import { conclusionInputSchema } from '../../../../features/casefile/casefile.schema';

/** Save the Casefile's conclusion draft; who may write it follows the resolve rule (checked per trip kind). */
export const PUT: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'operator', 'analyst', 'engineer', 'admin');
  const id = idParam('id', params.id);
  const input = await parseBody(conclusionInputSchema, request);
  return json({ conclusion: await saveConclusion(db, id, user, input.conclusion) });
});
