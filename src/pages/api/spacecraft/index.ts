import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { HttpError, handle, json } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { insertSpacecraftWithSheet, listFleet } from '../../../lib/server/spacecraft';
import { spacecraftSheetSchema, sheetIssuesByPath } from '../../../lib/spacecraft-sheet.schema';

export const GET: APIRoute = handle(async ({ locals }) => {
  requireRole(locals);
  return json({ spacecraft: await listFleet(db) });
});

export const POST: APIRoute = handle(async ({ request, locals }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    throw new HttpError('BAD_REQUEST', 'The body is not valid JSON; send the spacecraft sheet as JSON.');
  }
  const parsed = spacecraftSheetSchema.safeParse(body);
  if (!parsed.success) throw new HttpError('BAD_REQUEST', 'The sheet has errors; see fields (JSON paths).', sheetIssuesByPath(parsed.error));
  const created = await db.transaction().execute((trx) => insertSpacecraftWithSheet(trx, parsed.data, user.id));
  return json({ spacecraft: { key: created.key } }, 201);
});
