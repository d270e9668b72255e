import type { APIRoute } from 'astro';
import { handle, json } from '../../lib/server/http';
import { requireRole } from '../../lib/server/auth/require';
import { openApiDocument } from '../../lib/server/openapi';

/** The OpenAPI 3.0 description of the JSON API, for anyone signed in (it lists the admin routes too). */
export const GET: APIRoute = handle(async ({ locals }) => {
  requireRole(locals);
  return json(openApiDocument(), 200, { 'cache-control': 'private, max-age=300' });
});
