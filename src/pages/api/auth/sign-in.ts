import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody } from '../../../lib/server/http';
import { checkCredentials } from '../../../lib/server/auth/sign-in';
import { signInInputSchema, startSession } from '../../../lib/server/auth/session';
import { findRolesByUserId } from '../../../lib/server/users';

export const POST: APIRoute = handle(async ({ request, cookies, clientAddress }) => {
  const input = await parseBody(signInInputSchema, request);
  const userId = await checkCredentials(db, { ...input, address: clientAddress });
  await startSession(cookies, userId);
  return json({ user: { id: userId, email: input.email.toLowerCase(), roles: await findRolesByUserId(db, userId) } });
});
