import type { APIRoute } from 'astro';
import { db } from '../../lib/server/db';
import { handle, json } from '../../lib/server/http';
import { requireRole } from '../../lib/server/auth/require';
import { listPeople } from '../../lib/server/users';

export const GET: APIRoute = handle(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json({ people: await listPeople(db) });
});
