import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody, parseWith } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../lib/server/params';
import { createDraft, findLimitSetView, listLimitSetSummaries } from '../../../lib/server/limit-review';
import { createDraftInputSchema, limitSetListQuerySchema } from '../../../features/limit-bench/limit-bench.schema';

export const GET: APIRoute = handle(async ({ locals, url }) => {
  requireRole(locals);
  const q = parseWith(limitSetListQuerySchema, Object.fromEntries(url.searchParams), 'query');
  const sc = await spacecraftFromParam(db, q.spacecraft);
  return json({ spacecraft: sc.key, sets: await listLimitSetSummaries(db, sc.id) });
});

export const POST: APIRoute = handle(async ({ locals, request }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const input = await parseBody(createDraftInputSchema, request);
  const sc = await spacecraftFromParam(db, input.spacecraft);
  const created = await createDraft(db, sc, user, input.copyOf);
  return json({ set: await findLimitSetView(db, created.id) }, 201);
});
