import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody } from '../../../lib/server/http';
import { setPasswordInputSchema, setPasswordWithToken } from '../../../lib/server/password-reset';

/** Set a new password with the token of a reset link; works once, within the link's hour. Every session of the account ends. */
export const POST: APIRoute = handle(async ({ request }) => {
  const input = await parseBody(setPasswordInputSchema, request);
  await setPasswordWithToken(db, { token: input.token, purpose: 'reset', password: input.password });
  return json({ passwordSet: true });
});
