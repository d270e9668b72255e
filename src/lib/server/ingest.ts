import fs from 'node:fs';
import path from 'node:path';
import type pg from 'pg';
import type { Kysely } from 'kysely';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { PacketBatch, reserveBatchId, storeBatch, type Gap, type StoreResult } from './telemetry-store';
import { PacketStreamDecoder, decodeBuffer, type RejectReason } from '../telemetry';
import { spacecraftSheetSchema } from '../spacecraft-sheet.schema';

/** The largest body one ingest request may carry. */
export const MAX_INGEST_BYTES = 8 * 1024 * 1024;
/** Uploads are stored in transactions of about this many packets. */
const UPLOAD_BATCH_PACKETS = 100_000;

/** The contract's ingest response. */
export interface IngestReport {
  accepted: number;
  duplicates: number;
  rejected: { offset: number; reason: RejectReason }[];
  gaps: Gap[];
}

const loopIdCache = new Map<number, { at: number; ids: Set<number> }>();

/**
 * Loop ids the spacecraft has: the union over all its sheets, so that playback recorded under an
 * older sheet still decodes. Cached for a few seconds.
 */
export async function loopIdsOf(db: Kysely<Database>, spacecraftId: number, nowMs = Date.now()): Promise<Set<number>> {
  const hit = loopIdCache.get(spacecraftId);
  if (hit && nowMs - hit.at < 5_000) return hit.ids;
  const rows = await db.selectFrom('spacecraft_sheet').select('sheet').where('spacecraft_id', '=', spacecraftId).execute();
  const ids = new Set<number>();
  for (const r of rows) for (const l of spacecraftSheetSchema.parse(r.sheet).loops) ids.add(l.id);
  loopIdCache.set(spacecraftId, { at: nowMs, ids });
  return ids;
}

/** Forget cached loop ids (after a sheet upload). */
export function forgetLoopIds(spacecraftId: number): void {
  loopIdCache.delete(spacecraftId);
}

/** The station id for an optional `station` key; 400 when the key is unknown. */
export async function resolveStation(db: Kysely<Database>, key: string | null): Promise<number | null> {
  if (!key) return null;
  const row = await db.selectFrom('ground_station').select('id').where('key', '=', key).executeTakeFirst();
  if (!row) throw new HttpError('BAD_REQUEST', `Unknown ground station "${key}".`, { station: [`no ground station has the key "${key}"`] });
  return row.id;
}

/** Read a request body up to a limit; 413 beyond it (whether or not Content-Length said so). */
export async function readBodyLimited(request: Request, limit = MAX_INGEST_BYTES): Promise<Uint8Array> {
  const declared = Number(request.headers.get('content-length') ?? NaN);
  const tooLarge = () => new HttpError('PAYLOAD_TOO_LARGE', `One request may carry at most ${limit / 1048576} MiB; send bigger dumps as several requests or upload them as a pass file.`);
  if (declared > limit) throw tooLarge();
  if (!request.body) return new Uint8Array(0);
  const chunks: Uint8Array[] = [];
  let total = 0;
  const reader = request.body.getReader();
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > limit) {
      await reader.cancel();
      throw tooLarge();
    }
    chunks.push(value);
  }
  if (chunks.length === 1) return chunks[0]!;
  const out = new Uint8Array(total);
  let o = 0;
  for (const c of chunks) {
    out.set(c, o);
    o += c.byteLength;
  }
  return out;
}

function report(r: StoreResult): IngestReport {
  return { accepted: r.accepted, duplicates: r.duplicates, rejected: r.rejected, gaps: r.gaps };
}

/** Decode and store one request body as one transaction. */
export async function ingestBody(
  pool: pg.Pool,
  db: Kysely<Database>,
  body: Uint8Array,
  meta: { spacecraftId: number; stationId: number | null; tokenId: number | null },
  nowMs = Date.now(),
): Promise<{ report: IngestReport; unreadable: boolean }> {
  if (body.byteLength === 0) throw new HttpError('BAD_REQUEST', 'The body is empty: send a concatenation of space packets.');
  const batch = new PacketBatch(meta.spacecraftId, await reserveBatchId(pool), nowMs);
  batch.bytes = body.byteLength;
  decodeBuffer(body, { loopIds: await loopIdsOf(db, meta.spacecraftId, nowMs) }, batch);
  const stored = await storeBatch(pool, batch, { ...meta, source: 'post' });
  // Nothing in the body was a readable packet: the whole body is unreadable.
  return { report: report(stored), unreadable: batch.valid === 0 && batch.idleCount === 0 };
}

function mergeReports(into: IngestReport, r: StoreResult): void {
  into.accepted += r.accepted;
  into.duplicates += r.duplicates;
  into.rejected.push(...r.rejected);
  into.gaps.push(...r.gaps);
}

/**
 * Ingest a stream of packets of any length (an uploaded pass file): decoded as it arrives,
 * stored in transactions of ~100 000 packets, never held whole in memory.
 */
export async function ingestStream(
  pool: pg.Pool,
  db: Kysely<Database>,
  source: AsyncIterable<Uint8Array>,
  meta: { spacecraftId: number; stationId: number | null; uploadId: number },
  onProgress?: (bytes: number) => void,
): Promise<IngestReport & { bytes: number; idle: number }> {
  const total: IngestReport = { accepted: 0, duplicates: 0, rejected: [], gaps: [] };
  const ctx = { loopIds: await loopIdsOf(db, meta.spacecraftId) };
  let idle = 0;
  let batch = new PacketBatch(meta.spacecraftId, await reserveBatchId(pool));
  // One visitor forwards into whichever batch is current.
  const decoder = new PacketStreamDecoder(ctx, {
    record: (rec) => batch.record(rec),
    reject: (offset, reason, raw) => batch.reject(offset, reason, raw),
    idle: () => batch.idle(),
  });
  let bytes = 0;
  const flush = async () => {
    if (batch.packets === 0) return;
    idle += batch.idleCount;
    mergeReports(total, await storeBatch(pool, batch, { ...meta, source: 'upload' }));
    batch = new PacketBatch(meta.spacecraftId, await reserveBatchId(pool));
  };
  for await (const chunk of source) {
    decoder.push(chunk);
    bytes += chunk.byteLength;
    batch.bytes += chunk.byteLength;
    onProgress?.(bytes);
    if (batch.valid >= UPLOAD_BATCH_PACKETS) await flush();
  }
  decoder.end();
  await flush();
  return { ...total, bytes, idle };
}

/** Where uploaded pass files are kept. */
export function uploadDir(base: string): string {
  const dir = path.resolve(base);
  fs.mkdirSync(dir, { recursive: true });
  return dir;
}
