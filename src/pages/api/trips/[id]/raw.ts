import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json, parseWith } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { findRawWindow } from '../../../../lib/server/casefile';
import { rawQuerySchema } from '../../../../features/casefile/casefile.schema';

/** The raw 10 Hz housekeeping (loop_sample rows) of one analysis window: ?window=ISO&loop=N. */
export const GET: APIRoute = handle(async ({ locals, params, url }) => {
  requireRole(locals);
  const id = idParam('id', params.id);
  const q = parseWith(rawQuerySchema, Object.fromEntries(url.searchParams), 'query');
  return json(await findRawWindow(db, id, q.window, q.loop));
});
