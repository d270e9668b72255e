import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { changePassword } from '../../../lib/server/password-reset';
import { changePasswordInputSchema } from '../../../features/account/account.schema';

/** Change one's own password (the current one required); the other sessions of the account end. */
export const POST: APIRoute = handle(async ({ locals, request, clientAddress }) => {
  const user = requireRole(locals);
  const input = await parseBody(changePasswordInputSchema, request);
  const out = await changePassword(db, { user, sessionId: locals.session?.id ?? null, currentPassword: input.currentPassword, newPassword: input.newPassword, address: clientAddress });
  return json({ changed: true, ...out });
});
