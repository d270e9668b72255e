import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../../lib/server/params';
import { addOnCallShift, rosterView } from '../../../../lib/server/mail/roster';
import { createOnCallShiftInputSchema, parseUtcDateTime } from '../../../../features/roster/roster.schema';

/** The spacecraft's roster: shifts from a day ago on, the people who can be put on call. */
export const GET: APIRoute = handle(async ({ locals, params }) => {
  const user = requireRole(locals);
  const sc = await spacecraftFromParam(db, params.key);
  return json(await rosterView(db, sc, user, new Date()));
});

/** Put someone on call (operator or admin). */
export const POST: APIRoute = handle(async ({ request, locals, params }) => {
  const user = requireRole(locals, 'operator', 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  const input = await parseBody(createOnCallShiftInputSchema, request);
  const created = await db.transaction().execute((trx) =>
    addOnCallShift(trx, { spacecraftId: sc.id, userId: input.userId, startsAt: parseUtcDateTime(input.startsAt)!, endsAt: parseUtcDateTime(input.endsAt)! }, user.id),
  );
  return json({ id: created.id }, 201);
});
