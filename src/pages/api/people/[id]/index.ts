import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { personIdParam, updatePerson } from '../../../../lib/server/people';
import { updatePersonInputSchema } from '../../../../features/people/people.schema';

/** Change someone's roles, or disable (ending their sessions) or re-enable the account (admin). */
export const PATCH: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'admin');
  const id = personIdParam(params.id);
  const patch = await parseBody(updatePersonInputSchema, request);
  return json(await updatePerson(db, id, patch, user));
});
