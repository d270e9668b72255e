import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseBody } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../lib/server/params';
import { insertPassNote, listPassLog } from '../../../lib/server/pass-log';
import { passNoteInputSchema } from '../../../features/pass-watch/pass-watch.schema';

/** The pass log of the last day: passes with handover notes, trips handled and data received. */
export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals);
  const sc = await spacecraftFromParam(db, params.key);
  return json(await listPassLog(db, sc));
});

/** Write a handover note on a pass that has ended. */
export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'operator', 'analyst', 'engineer', 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  const input = await parseBody(passNoteInputSchema, request);
  return json({ pass: await insertPassNote(db, sc, input, user) }, 201);
});
