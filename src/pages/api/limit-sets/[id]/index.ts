import type { APIRoute } from 'astro';
import { z } from 'zod';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { findLimitSetView, updateDraft } from '../../../../lib/server/limit-review';

export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals);
  return json({ set: await findLimitSetView(db, idParam('id', params.id)) });
});

/** Edit a draft: the body is validated with the shared limit-set schema and the spacecraft's loops, once the draft is known. */
export const PUT: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const id = idParam('id', params.id);
  await updateDraft(db, id, await parseBody(z.unknown(), request), user);
  return json({ set: await findLimitSetView(db, id) });
});
