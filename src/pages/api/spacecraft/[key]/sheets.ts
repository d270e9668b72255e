import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { HttpError, handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../../lib/server/params';
import { addSheet, listSheets } from '../../../../lib/server/sheets';
import { recomputePasses } from '../../../../lib/server/passes';

export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals);
  const sc = await spacecraftFromParam(db, params.key);
  return json({ sheets: await listSheets(db, sc.id) });
});

export const POST: APIRoute = handle(async ({ request, locals, params }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    throw new HttpError('BAD_REQUEST', 'The body is not valid JSON; send the sheet as JSON.');
  }
  // The spacecraft's passes follow the new element set at once, in the transaction that stores it.
  return json(await addSheet(db, sc, body, user.id, { inTransaction: (trx) => recomputePasses(trx, sc.id) }), 201);
});
