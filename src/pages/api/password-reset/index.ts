import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody } from '../../../lib/server/http';
import { RESET_REQUEST_ANSWER, passwordResetRequestSchema, requestPasswordReset } from '../../../lib/server/password-reset';

/** Ask for a reset link by e-mail. The answer is the same whether or not an account uses the address. */
export const POST: APIRoute = handle(async ({ request, clientAddress }) => {
  const input = await parseBody(passwordResetRequestSchema, request);
  await requestPasswordReset(db, { email: input.email, address: clientAddress });
  return json({ accepted: true, message: RESET_REQUEST_ANSWER }, 202);
});
