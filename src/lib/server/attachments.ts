import fs from 'node:fs';
import path from 'node:path';
import { createHash, randomUUID } from 'node:crypto';
import { Readable } from 'node:stream';
import busboy from 'busboy';
import type { Kysely } from 'kysely';
import type { Database } from './db/schema';
import { HttpError, parseWith } from './http';
import { insertAuditEntry } from './audit';
import type { SessionUser } from './auth/roles';
import {
  ATTACHMENT_TYPES,
  MAX_ATTACHMENT_BYTES,
  MAX_ATTACHMENTS_PER_NOTE,
  mayAddNote,
  noteInputSchema,
  CASEFILE_ROLE_RULE,
  type AttachmentType,
} from '../../features/casefile/casefile.schema';

/** The folder attachments live in, under the upload directory. */
export function attachmentDir(uploadDir: string): string {
  return path.resolve(uploadDir, 'attachments');
}

/** The binary type a file's first bytes announce (PNG, JPEG or PDF signature), or null. */
export function sniffBinaryType(head: Uint8Array): 'image/png' | 'image/jpeg' | 'application/pdf' | null {
  const starts = (sig: number[]) => head.length >= sig.length && sig.every((b, i) => head[i] === b);
  // Signatures (from memory of the format standards): PNG 89 50 4E 47 0D 0A 1A 0A (ISO/IEC 15948),
  // JPEG start-of-image FF D8 then a marker FF (ISO/IEC 10918-1), PDF "%PDF-" (ISO 32000-1).
  if (starts([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a])) return 'image/png';
  if (starts([0xff, 0xd8, 0xff])) return 'image/jpeg';
  if (starts([0x25, 0x50, 0x44, 0x46, 0x2d])) return 'application/pdf';
  return null;
}

/** Streams chunks through a text check: UTF-8 (BOM allowed), no NUL and no control bytes but tab, CR and LF. */
export class TextCheck {
  private readonly decoder = new TextDecoder('utf-8', { fatal: true });
  ok = true;
  /** Feed the next chunk. */
  push(chunk: Uint8Array): void {
    if (!this.ok) return;
    for (let i = 0; i < chunk.length; i++) {
      const b = chunk[i]!;
      if ((b < 0x20 && b !== 0x09 && b !== 0x0a && b !== 0x0d) || b === 0x7f) {
        this.ok = false;
        return;
      }
    }
    try {
      this.decoder.decode(chunk, { stream: true });
    } catch {
      this.ok = false;
    }
  }
  /** True when everything fed was text. */
  end(): boolean {
    if (!this.ok) return false;
    try {
      this.decoder.decode();
    } catch {
      this.ok = false;
    }
    return this.ok;
  }
}

/**
 * The attachment type of a file from its name and contents: the name's ending must be one the type
 * allows, and the contents must be that type (magic bytes for PNG, JPEG and PDF; plain UTF-8 text
 * for CSV). Throws 400 naming the file otherwise.
 */
export function checkAttachmentType(fileName: string, head: Uint8Array, isText: boolean): AttachmentType {
  const ext = path.extname(fileName).toLowerCase();
  const claimed = (Object.keys(ATTACHMENT_TYPES) as AttachmentType[]).find((t) => (ATTACHMENT_TYPES[t] as readonly string[]).includes(ext));
  const allowed = 'Attach PNG or JPEG images, CSV files or PDF documents.';
  if (!claimed) throw new HttpError('BAD_REQUEST', `${fileName}: files ending in "${ext || '(none)'}" are not accepted. ${allowed}`, { files: [`${fileName}: not an accepted type`] });
  const sniffed = sniffBinaryType(head);
  const actual: AttachmentType | null = sniffed ?? (isText ? 'text/csv' : null);
  if (actual !== claimed) {
    const what = actual ? `its contents are ${actual}` : 'its contents are not any accepted type';
    throw new HttpError('BAD_REQUEST', `${fileName}: the name says ${claimed} but ${what}. ${allowed}`, { files: [`${fileName}: contents do not match the name`] });
  }
  return claimed;
}

function safeName(name: string): string {
  return path.basename(name || 'file').replace(/[^A-Za-z0-9._-]+/g, '_').slice(0, 120) || 'file';
}

interface Incoming {
  fileName: string;
  tmpPath: string;
  bytes: number;
  sha256: string;
  head: Uint8Array;
  isText: boolean;
  truncated: boolean;
}

/** Read a multipart note (field `body`, files in `files`) to temporary files, streaming. */
async function readMultipartNote(request: Request, dir: string): Promise<{ fields: Record<string, string>; files: Incoming[] }> {
  const type = request.headers.get('content-type') ?? '';
  if (!type.startsWith('multipart/form-data')) throw new HttpError('BAD_REQUEST', 'Send the note as multipart/form-data: the text in "body", files in "files".', { body: ['required'] });
  if (!request.body) throw new HttpError('BAD_REQUEST', 'The note is empty.', { body: ['required'] });
  fs.mkdirSync(dir, { recursive: true });
  const fields: Record<string, string> = {};
  const files: Incoming[] = [];
  const writes: Promise<void>[] = [];
  let tooMany = false;
  await new Promise<void>((resolve, reject) => {
    const bb = busboy({ headers: { 'content-type': type }, limits: { files: MAX_ATTACHMENTS_PER_NOTE, fileSize: MAX_ATTACHMENT_BYTES, fields: 5, fieldSize: 64 * 1024 } });
    bb.on('field', (name, value) => {
      fields[name] = value;
    });
    bb.on('filesLimit', () => {
      tooMany = true;
    });
    bb.on('file', (field, stream, info) => {
      if (field !== 'files' || !info.filename) {
        stream.resume();
        return;
      }
      const item: Incoming = { fileName: info.filename, tmpPath: path.join(dir, `.incoming-${randomUUID()}`), bytes: 0, sha256: '', head: new Uint8Array(0), isText: false, truncated: false };
      files.push(item);
      const hash = createHash('sha256');
      const text = new TextCheck();
      const out = fs.createWriteStream(item.tmpPath);
      const heads: Buffer[] = [];
      let headLen = 0;
      stream.on('data', (c: Buffer) => {
        item.bytes += c.length;
        hash.update(c);
        text.push(c);
        if (headLen < 16) {
          heads.push(c);
          headLen += c.length;
        }
      });
      stream.on('limit', () => {
        item.truncated = true;
      });
      writes.push(
        new Promise<void>((res, rej) => {
          out.on('finish', () => {
            item.sha256 = hash.digest('hex');
            item.isText = text.end();
            item.head = new Uint8Array(Buffer.concat(heads).subarray(0, 16));
            res();
          });
          out.on('error', rej);
          stream.on('error', rej);
        }),
      );
      stream.pipe(out);
    });
    bb.on('error', (err) => reject(new HttpError('BAD_REQUEST', `The multipart body could not be read: ${(err as Error).message}`)));
    bb.on('close', () => resolve());
    Readable.fromWeb(request.body as import('node:stream/web').ReadableStream).on('error', reject).pipe(bb);
  }).catch(async (err) => {
    await Promise.allSettled(writes);
    for (const f of files) fs.rmSync(f.tmpPath, { force: true });
    throw err;
  });
  await Promise.all(writes);
  if (tooMany) {
    for (const f of files) fs.rmSync(f.tmpPath, { force: true });
    throw new HttpError('BAD_REQUEST', `A note takes at most ${MAX_ATTACHMENTS_PER_NOTE} attachments.`, { files: [`at most ${MAX_ATTACHMENTS_PER_NOTE} files`] });
  }
  return { fields, files };
}

/**
 * Add a note with attachments to a trip from a multipart request: the text in `body`, files in
 * `files` (PNG, JPEG, CSV, PDF; at most 20 MB each, type checked by content). Files stream to disk
 * under UPLOAD_DIR/attachments and are kept only when the whole note is valid.
 */
export async function insertNoteFromRequest(db: Kysely<Database>, request: Request, tripId: number, user: SessionUser, uploadDir: string) {
  if (!mayAddNote(user.roles)) throw new HttpError('FORBIDDEN', `Your roles may not add notes. ${CASEFILE_ROLE_RULE}`);
  const trip = await db.selectFrom('trip').select(['id', 'state']).where('id', '=', tripId).executeTakeFirst();
  if (!trip) throw new HttpError('NOT_FOUND', `No trip ${tripId}.`);
  const base = attachmentDir(uploadDir);
  const { fields, files } = await readMultipartNote(request, base);
  const moved: string[] = [];
  try {
    const input = parseWith(noteInputSchema, { body: fields.body ?? '' }, 'note');
    const checked = files.map((f) => {
      if (f.truncated) throw new HttpError('PAYLOAD_TOO_LARGE', `${f.fileName} is larger than ${MAX_ATTACHMENT_BYTES / 1024 / 1024} MB.`, { files: [`${f.fileName}: larger than 20 MB`] });
      if (f.bytes === 0) throw new HttpError('BAD_REQUEST', `${f.fileName} is empty.`, { files: [`${f.fileName}: empty`] });
      return { ...f, mediaType: checkAttachmentType(f.fileName, f.head, f.isText) };
    });
    const folder = path.join(base, String(tripId));
    fs.mkdirSync(folder, { recursive: true });
    return await db.transaction().execute(async (trx) => {
      const note = await trx.insertInto('trip_note').values({ trip_id: tripId, author_id: user.id, body: input.body }).returning(['id', 'created_at']).executeTakeFirstOrThrow();
      for (const f of checked) {
        const stored = path.join(folder, `${randomUUID()}-${safeName(f.fileName)}`);
        fs.renameSync(f.tmpPath, stored);
        moved.push(stored);
        await trx
          .insertInto('trip_attachment')
          .values({ trip_id: tripId, note_id: note.id, file_name: f.fileName.slice(0, 200), media_type: f.mediaType, bytes: f.bytes, sha256: f.sha256, stored_path: stored })
          .execute();
      }
      await insertAuditEntry(trx, { actorId: user.id, action: 'trip.note', targetType: 'trip', targetId: tripId, detail: { noteId: note.id, attachments: checked.map((f) => ({ name: f.fileName, type: f.mediaType, bytes: f.bytes, sha256: f.sha256 })) } });
      return { id: note.id, attachments: checked.length };
    });
  } catch (err) {
    for (const p of moved) fs.rmSync(p, { force: true });
    throw err;
  } finally {
    for (const f of files) fs.rmSync(f.tmpPath, { force: true });
  }
}

/** One attachment of a trip, opened for streaming; 404 when it is not the trip's or is gone from disk. */
export async function openAttachment(db: Kysely<Database>, tripId: number, attachmentId: number) {
  const row = await db
    .selectFrom('trip_attachment')
    .select(['id', 'file_name', 'media_type', 'bytes', 'stored_path'])
    .where('id', '=', attachmentId)
    .where('trip_id', '=', tripId)
    .executeTakeFirst();
  if (!row) throw new HttpError('NOT_FOUND', `Trip ${tripId} has no attachment ${attachmentId}.`);
  if (!fs.existsSync(row.stored_path)) throw new HttpError('NOT_FOUND', `The file of attachment ${attachmentId} is no longer on disk.`);
  return { fileName: row.file_name, mediaType: row.media_type, bytes: row.bytes, stream: fs.createReadStream(row.stored_path) };
}
