import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { findTrip } from '../../../../lib/server/trips';
import { listNotes } from '../../../../lib/server/casefile';
import { insertNoteFromRequest } from '../../../../lib/server/attachments';
import { config } from '../../../../lib/server/config';

/** The notes thread of a trip's Casefile; everyone signed in reads it. */
export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals);
  const id = idParam('id', params.id);
  await findTrip(db, id);
  return json({ notes: await listNotes(db, id) });
});

/** Add a note (multipart: `body`, files in `files`); analysts and engineers only. */
export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'analyst', 'engineer');
  const id = idParam('id', params.id);
  const note = await insertNoteFromRequest(db, request, id, user, config().UPLOAD_DIR);
  return json({ note, notes: await listNotes(db, id) }, 201);
});
