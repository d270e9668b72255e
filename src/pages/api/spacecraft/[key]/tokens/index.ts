import type { APIRoute } from 'astro';
import { z } from 'zod';
import { db } from '../../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../../lib/server/http';
import { requireRole } from '../../../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../../../lib/server/params';
import { createIngestToken, listIngestTokens } from '../../../../../lib/server/ingest-tokens';

export const createTokenInputSchema = z.object({
  label: z.string().trim().min(1, 'Give the token a label (e.g. the station or script that uses it).').max(80, 'At most 80 characters.'),
});

export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals, 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  return json({ tokens: await listIngestTokens(db, sc.id) });
});

/** Create a token: the clear value is in this answer only. */
export const POST: APIRoute = handle(async ({ request, locals, params }) => {
  const user = requireRole(locals, 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  const input = await parseBody(createTokenInputSchema, request);
  const created = await db.transaction().execute((trx) => createIngestToken(trx, sc.id, input.label, user.id));
  return json({ id: created.id, token: created.token, label: input.label, spacecraft: sc.key }, 201);
});
