import type { APIRoute } from 'astro';
import { db } from '../../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../../lib/server/http';
import { requireRole } from '../../../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../../../lib/server/params';
import { createIngestToken, listIngestTokens } from '../../../../../lib/server/ingest-tokens';
import { createTokenFormSchema } from '../../../../../features/tokens/tokens.schema';

export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals, 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  return json({ tokens: await listIngestTokens(db, sc.id) });
});

/** Create a token: the clear value is in this answer only. */
export const POST: APIRoute = handle(async ({ request, locals, params }) => {
  const user = requireRole(locals, 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  const input = await parseBody(createTokenFormSchema, request);
  const created = await db.transaction().execute((trx) => createIngestToken(trx, sc.id, input.label, user.id));
  return json({ id: created.id, token: created.token, label: input.label, spacecraft: sc.key }, 201);
});
