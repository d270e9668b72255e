import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, parseWith } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { evidenceCsv } from '../../../../lib/server/casefile';
import { evidenceQuerySchema } from '../../../../features/casefile/casefile.schema';

/** The evidence series of a trip as CSV, one row per 60 s window, full resolution: ?from=&to=&loop=. */
export const GET: APIRoute = handle(async ({ locals, params, url }) => {
  requireRole(locals);
  const id = idParam('id', params.id);
  const q = parseWith(evidenceQuerySchema, Object.fromEntries(url.searchParams), 'query');
  const { fileName, csv } = await evidenceCsv(db, id, q);
  return new Response(csv, {
    status: 200,
    headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="${fileName}"`, 'cache-control': 'no-store' },
  });
});
