import type { APIRoute } from 'astro';
import { db, pool } from '../../lib/server/db';
import { HttpError, handle, json } from '../../lib/server/http';
import { findLiveToken } from '../../lib/server/ingest-tokens';
import { ingestBody, readBodyLimited, resolveStation } from '../../lib/server/ingest';

/** Telemetry ingest: a concatenation of space packets, authorised by the spacecraft's ingest token. */
export const POST: APIRoute = handle(async ({ request, url }) => {
  const auth = request.headers.get('authorization') ?? '';
  const bearer = /^Bearer\s+(\S+)$/i.exec(auth)?.[1];
  if (!bearer) throw new HttpError('UNAUTHORIZED', 'Send the ingest token as "Authorization: Bearer <token>".');
  const token = await findLiveToken(db, bearer);
  if (!token) throw new HttpError('UNAUTHORIZED', 'The ingest token is unknown or revoked.');
  const type = (request.headers.get('content-type') ?? '').split(';')[0]!.trim();
  if (type !== 'application/octet-stream') {
    throw new HttpError('BAD_REQUEST', 'Send the packets with Content-Type: application/octet-stream.', { 'content-type': [`expected application/octet-stream, got "${type || 'none'}"`] });
  }
  const stationId = await resolveStation(db, url.searchParams.get('station'));
  const body = await readBodyLimited(request);
  const { report, unreadable } = await ingestBody(pool, db, body, { spacecraftId: token.spacecraft_id, stationId, tokenId: token.id });
  if (unreadable) {
    const first = report.rejected[0];
    return json({ error: { code: 'BAD_REQUEST', message: `No packet in the body could be read${first ? ` (at offset ${first.offset}: ${first.reason})` : ''}; the rejected bytes are kept for forensics.` }, ...report }, 400);
  }
  return json(report);
});
