import type { APIRoute } from 'astro';
import { handle, json } from '../../../lib/server/http';
import { endSession } from '../../../lib/server/auth/session';

export const POST: APIRoute = handle(async ({ request, cookies, locals, redirect }) => {
  await endSession(cookies, locals.session?.id ?? null);
  // A browser form post gets the sign-in page back; scripts get JSON.
  if ((request.headers.get('content-type') ?? '').includes('form')) return redirect('/sign-in', 303);
  return json({ signedOut: true });
});
