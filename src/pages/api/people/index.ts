import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { invitePerson, listPeopleForAdmin } from '../../../lib/server/people';
import { invitePersonInputSchema } from '../../../features/people/people.schema';

/** Everyone with roles, status, live sessions and pending invitation (admin). */
export const GET: APIRoute = handle(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json({ people: await listPeopleForAdmin(db) });
});

/** Invite someone by e-mail with roles; the one-time link goes out through the outbox (admin). */
export const POST: APIRoute = handle(async ({ locals, request }) => {
  const user = requireRole(locals, 'admin');
  const input = await parseBody(invitePersonInputSchema, request);
  return json(await invitePerson(db, input, user), 201);
});
