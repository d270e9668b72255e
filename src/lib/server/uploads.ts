import fs from 'node:fs';
import path from 'node:path';
import { createHash } from 'node:crypto';
import { Readable, pipeline } from 'node:stream';
import busboy from 'busboy';
import type pg from 'pg';
import type { Kysely } from 'kysely';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { ingestStream, type StreamReport } from './ingest';
import { insertAuditEntry } from './audit';

/** An upload's answer: the ingest report (counts exact, lists capped) and the kept file. */
export interface UploadReport extends StreamReport {
  uploadId: number;
  sha256: string | null;
}

/** The pass file could not be kept on disk. */
class FileWriteError extends Error {
  constructor(err: Error) {
    super(err.message);
  }
}

function safeName(name: string): string {
  return (path.basename(name || 'pass.bin').replace(/[^A-Za-z0-9._-]+/g, '_').slice(0, 80) || 'pass.bin');
}

/** Receive a multipart upload (field `file`), keep the file, and ingest it as it streams in. */
export async function receivePacketUpload(
  pool: pg.Pool,
  db: Kysely<Database>,
  request: Request,
  meta: { spacecraftId: number; stationId: number | null; actorId: string; dir: string },
): Promise<UploadReport> {
  const type = request.headers.get('content-type') ?? '';
  if (!type.startsWith('multipart/form-data')) throw new HttpError('BAD_REQUEST', 'Send the pass file as multipart/form-data in the field "file".', { file: ['required'] });
  if (!request.body) throw new HttpError('BAD_REQUEST', 'The upload is empty.', { file: ['required'] });
  fs.mkdirSync(meta.dir, { recursive: true });

  return new Promise<UploadReport>((resolve, reject) => {
    let handled = false;
    const bb = busboy({ headers: { 'content-type': type }, limits: { files: 1, fields: 10 } });
    bb.on('file', (field, stream, info) => {
      if (field !== 'file' || handled) {
        stream.resume();
        return;
      }
      handled = true;
      storeUploadedStream(pool, db, stream, info.filename ?? "pass.bin", meta).then(resolve, reject);
    });
    bb.on('error', (err) => reject(new HttpError('BAD_REQUEST', `The multipart body could not be read: ${(err as Error).message}`)));
    bb.on('close', () => {
      if (!handled) reject(new HttpError('BAD_REQUEST', 'No file in the field "file".', { file: ['required'] }));
    });
    // pipeline, not pipe: a request body that errors (the browser closed, the network dropped)
    // destroys busboy, which ends the file stream with that error, so the upload is marked
    // failed; with pipe the error would have no listener and take the server down.
    pipeline(Readable.fromWeb(request.body as import('node:stream/web').ReadableStream), bb, (err) => {
      if (err) reject(new HttpError('BAD_REQUEST', `The upload was interrupted before the file was complete: ${err.message}`, { file: ['incomplete'] }));
    });
  });
}

async function storeUploadedStream(
  pool: pg.Pool,
  db: Kysely<Database>,
  stream: Readable,
  fileName: string,
  meta: { spacecraftId: number; stationId: number | null; actorId: string; dir: string },
): Promise<UploadReport> {
  const row = await db
    .insertInto('packet_upload')
    .values({ spacecraft_id: meta.spacecraftId, file_name: fileName || 'pass.bin', stored_path: '', station_id: meta.stationId, uploaded_by: meta.actorId })
    .returning('id')
    .executeTakeFirstOrThrow();
  // Absolute, so that the kept file is found whatever the working directory of a later process.
  const stored = path.resolve(meta.dir, `${row.id}-${safeName(fileName)}`);
  await db.updateTable('packet_upload').set({ stored_path: stored }).where('id', '=', row.id).execute();
  const hash = createHash('sha256');
  const out = fs.createWriteStream(stored);
  // A disk error (full, read-only, gone) must end this upload, not the server: without a
  // listener an 'error' event would be thrown out of the event loop.
  let writeError: Error | null = null;
  let wake: (() => void) | null = null;
  out.on('error', (err) => {
    writeError ??= err;
    wake?.();
  });
  const waitFor = (event: 'drain' | 'finish') =>
    new Promise<void>((res) => {
      wake = () => {
        out.off(event, wake!);
        wake = null;
        res();
      };
      out.once(event, wake);
    });
  async function* teed(): AsyncGenerator<Uint8Array> {
    for await (const chunk of stream) {
      if (writeError) throw new FileWriteError(writeError);
      const c = chunk as Buffer;
      hash.update(c);
      if (!out.write(c)) await waitFor('drain');
      if (writeError) throw new FileWriteError(writeError);
      yield new Uint8Array(c.buffer, c.byteOffset, c.byteLength);
    }
  }
  try {
    const r = await ingestStream(pool, db, teed(), { spacecraftId: meta.spacecraftId, stationId: meta.stationId, uploadId: row.id });
    if (!writeError) {
      const finished = waitFor('finish');
      out.end();
      await finished;
    }
    if (writeError) throw new FileWriteError(writeError);
    const sha256 = hash.digest('hex');
    const report: UploadReport = { uploadId: row.id, sha256, ...r };
    await db
      .updateTable('packet_upload')
      .set({ bytes: r.bytes, sha256, status: 'done', report: JSON.stringify(summary(report)) })
      .where('id', '=', row.id)
      .execute();
    await insertAuditEntry(db, { actorId: meta.actorId, action: 'upload.ingest', targetType: 'packet_upload', targetId: row.id, detail: summary(report) });
    return report;
  } catch (err) {
    out.destroy();
    stream.resume(); // let the rest of the request body drain
    const failure = err instanceof FileWriteError ? err : writeError ? new FileWriteError(writeError) : null;
    if (failure) {
      // A partial file is no record of the pass: remove it, so that nothing offers it for re-ingest.
      await fs.promises.rm(stored, { force: true }).catch(() => undefined);
      await db
        .updateTable('packet_upload')
        .set({ status: 'failed', stored_path: '', report: JSON.stringify({ error: `the file could not be written to disk: ${failure.message}` }) })
        .where('id', '=', row.id)
        .execute();
      throw new HttpError(
        'INTERNAL_SERVER_ERROR',
        `The pass file could not be written to the server's disk (${failure.message}); the partial file was removed. ` +
          'Packets stored before the failure stay stored; once the disk takes writes again, upload the file again (what is already stored counts as duplicates).',
      );
    }
    // Whatever ended it (an interrupted body, a database error), the kept file is partial: remove it.
    await fs.promises.rm(stored, { force: true }).catch(() => undefined);
    await db
      .updateTable('packet_upload')
      .set({ status: 'failed', stored_path: '', report: JSON.stringify({ error: `the upload ended early: ${(err as Error).message ?? String(err)}` }) })
      .where('id', '=', row.id)
      .execute();
    throw err;
  }
}

/** The stored form of a report: counts, and the first rejects and gaps. */
function summary(r: UploadReport) {
  return {
    bytes: r.bytes,
    accepted: r.accepted,
    duplicates: r.duplicates,
    idle: r.idle,
    rejectedCount: r.rejectedCount,
    rejected: r.rejected.slice(0, 200),
    gapCount: r.gapCount,
    gaps: r.gaps.slice(0, 200),
  };
}

/** Ingest a kept pass file again (duplicates are counted, nothing changes twice). */
export async function reingestUpload(pool: pg.Pool, db: Kysely<Database>, uploadId: number, actorId: string): Promise<UploadReport> {
  const up = await db.selectFrom('packet_upload').select(['id', 'spacecraft_id', 'station_id', 'stored_path', 'sha256', 'status']).where('id', '=', uploadId).executeTakeFirst();
  if (!up) throw new HttpError('NOT_FOUND', `No upload ${uploadId}.`);
  // Only a complete file is a record of the pass; a failed or unfinished upload kept none.
  if (up.status !== 'done') {
    throw new HttpError('CONFLICT', `Upload ${uploadId} is ${up.status}, not done: only a completely received file can be ingested again; upload the file again instead.`, {
      status: [`is ${up.status}; re-ingest needs done`],
    });
  }
  if (!up.stored_path || !fs.existsSync(up.stored_path)) throw new HttpError('NOT_FOUND', `The file of upload ${uploadId} is no longer on disk.`);
  const r = await ingestStream(pool, db, fs.createReadStream(up.stored_path, { highWaterMark: 1 << 20 }), {
    spacecraftId: up.spacecraft_id,
    stationId: up.station_id,
    uploadId: up.id,
  });
  const report: UploadReport = { uploadId: up.id, sha256: up.sha256, ...r };
  await db.updateTable('packet_upload').set({ status: 'done', report: JSON.stringify(summary(report)) }).where('id', '=', up.id).execute();
  await insertAuditEntry(db, { actorId, action: 'upload.reingest', targetType: 'packet_upload', targetId: up.id, detail: summary(report) });
  return report;
}

/** Recent uploads, newest first. */
export function listUploads(db: Kysely<Database>, spacecraftId?: number) {
  let q = db
    .selectFrom('packet_upload as p')
    .innerJoin('spacecraft as s', 's.id', 'p.spacecraft_id')
    .leftJoin('app_user as u', 'u.id', 'p.uploaded_by')
    .leftJoin('ground_station as g', 'g.id', 'p.station_id')
    .select(['p.id', 's.key as spacecraft', 'p.file_name', 'p.bytes', 'p.sha256', 'p.status', 'p.report', 'p.uploaded_at', 'u.name as uploaded_by', 'g.key as station'])
    .orderBy('p.uploaded_at', 'desc')
    .limit(50);
  if (spacecraftId !== undefined) q = q.where('p.spacecraft_id', '=', spacecraftId);
  return q.execute();
}
