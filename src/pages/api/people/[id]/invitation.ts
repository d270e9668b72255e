import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { personIdParam, resendInvitation } from '../../../../lib/server/people';

/** Send a fresh invitation to someone who has not set a password yet; the earlier link stops working (admin). */
export const POST: APIRoute = handle(async ({ locals, params }) => {
  const user = requireRole(locals, 'admin');
  return json(await resendInvitation(db, personIdParam(params.id), user), 201);
});
