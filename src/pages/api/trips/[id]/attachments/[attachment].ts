import { Readable } from 'node:stream';
import type { APIRoute } from 'astro';
import { db } from '../../../../../lib/server/db';
import { handle } from '../../../../../lib/server/http';
import { requireRole } from '../../../../../lib/server/auth/require';
import { idParam } from '../../../../../lib/server/params';
import { openAttachment } from '../../../../../lib/server/attachments';

/** One attachment of a trip's notes. Images show inline (?download=1 saves them); CSV and PDF always download. */
export const GET: APIRoute = handle(async ({ locals, params, url }) => {
  requireRole(locals);
  const a = await openAttachment(db, idParam('id', params.id), idParam('attachment', params.attachment));
  const inline = a.mediaType.startsWith('image/') && url.searchParams.get('download') !== '1';
  const name = a.fileName.replace(/["\\\r\n]/g, '_');
  return new Response(Readable.toWeb(a.stream) as ReadableStream, {
    status: 200,
    headers: {
      'content-type': a.mediaType,
      'content-length': String(a.bytes),
      'content-disposition': `${inline ? 'inline' : 'attachment'}; filename="${name.replace(/[^\x20-\x7e]/g, '_')}"; filename*=UTF-8''${encodeURIComponent(a.fileName)}`,
      // The file is what a person uploaded: never let the browser guess a type or run it.
      'x-content-type-options': 'nosniff',
      'content-security-policy': "default-src 'none'; sandbox",
      'cache-control': 'private, max-age=300',
    },
  });
});
