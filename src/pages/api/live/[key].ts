import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { HttpError, handle, parseWith } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { spacecraftFromParam } from '../../../lib/server/params';
import { openLiveStream } from '../../../lib/server/live';
import { liveQuerySchema } from '../../../features/pass-watch/pass-watch.schema';

/**
 * Server-sent events of one spacecraft: `samples` (id = event number), `trip`, `trips`, `ready`,
 * `reset`. A reconnecting client's Last-Event-ID wins over `?after=`; with neither, from now.
 */
export const GET: APIRoute = handle(async ({ locals, params, request, url }) => {
  requireRole(locals, 'operator', 'analyst', 'engineer', 'admin');
  const sc = await spacecraftFromParam(db, params.key);
  const q = parseWith(liveQuerySchema, Object.fromEntries(url.searchParams), 'query');
  const header = request.headers.get('last-event-id');
  let afterSeq = q.after ?? null;
  if (header !== null && header.trim() !== '') {
    if (!/^\d{1,15}$/.test(header.trim())) throw new HttpError('BAD_REQUEST', 'Last-Event-ID must be an event number this stream sent.', { 'last-event-id': ['not an event number'] });
    afterSeq = Number(header.trim());
  }
  return openLiveStream({ db, spacecraft: sc, afterSeq, once: q.once !== undefined, signal: request.signal });
});
