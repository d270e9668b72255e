import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { approveSet, findLimitSetView } from '../../../../lib/server/limit-review';
import { reviewCommentInputSchema } from '../../../../features/limit-bench/limit-bench.schema';

export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const id = idParam('id', params.id);
  const input = await parseBody(reviewCommentInputSchema, request);
  const r = await approveSet(db, id, user, input.comment);
  return json({ set: await findLimitSetView(db, id), retired: r.retired, handover: r.handover });
});
