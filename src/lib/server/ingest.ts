import type pg from 'pg';
import type { Kysely } from 'kysely';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { PacketBatch, reserveBatchId, storeBatch, type Gap, type StoreResult } from './telemetry-store';
import { MAX_PACKET_LENGTH, PacketStreamDecoder, decodeBuffer, type RejectReason } from '../telemetry';
import { spacecraftSheetSchema } from '../spacecraft-sheet.schema';

/** The largest body one ingest request may carry. */
export const MAX_INGEST_BYTES = 8 * 1024 * 1024;
/**
 * Uploads are stored in transactions of about this many packets (valid, rejected and idle)…
 */
export const UPLOAD_BATCH_PACKETS = 100_000;
/** …or of about this many octets held (the file's octets plus the raw copies of rejects), whichever comes first. */
export const UPLOAD_BATCH_BYTES = 32 * 1024 * 1024;
/** An upload's answer lists at most this many rejects and gaps; the counts stay exact and quarantine keeps every reject. */
export const UPLOAD_REPORT_LIST_MAX = 1000;

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
  batch.rawSource = (offset, length) => body.subarray(offset, offset + length);
  decodeBuffer(body, { loopIds: await loopIdsOf(db, meta.spacecraftId, nowMs) }, batch);
  const stored = await storeBatch(pool, batch, { ...meta, source: 'post' });
  // Nothing in the body was a readable packet: the whole body is unreadable.
  return { report: report(stored), unreadable: batch.valid === 0 && batch.idleCount === 0 };
}

/** An upload's report: exact counts, and the first UPLOAD_REPORT_LIST_MAX rejects and gaps. */
export interface StreamReport extends IngestReport {
  bytes: number;
  idle: number;
  /** Rejected packets in all; quarantine holds every one of them. */
  rejectedCount: number;
  /** Rejects counted but not listed in `rejected`. */
  rejectedOmitted: number;
  gapCount: number;
  gapsOmitted: number;
}

function mergeReports(into: StreamReport, r: StoreResult): void {
  into.accepted += r.accepted;
  into.duplicates += r.duplicates;
  into.rejectedCount += r.rejected.length;
  into.gapCount += r.gaps.length;
  into.rejected.push(...r.rejected.slice(0, Math.max(0, UPLOAD_REPORT_LIST_MAX - into.rejected.length)));
  into.gaps.push(...r.gaps.slice(0, Math.max(0, UPLOAD_REPORT_LIST_MAX - into.gaps.length)));
  into.rejectedOmitted = into.rejectedCount - into.rejected.length;
  into.gapsOmitted = into.gapCount - into.gaps.length;
}

/**
 * The chunks of a stream that a packet reported by offset and length may lie in: the current
 * chunk and enough earlier ones to cover MAX_PACKET_LENGTH octets before it (a packet that the
 * current chunk completes began there). Chunks are kept by reference, not copied; a stream's
 * consumer owns the chunks it is handed.
 */
class StreamWindow {
  private readonly chunks: { start: number; bytes: Uint8Array }[] = [];

  /** Make `chunk`, starting at absolute offset `start`, the current chunk. */
  next(chunk: Uint8Array, start: number): void {
    this.chunks.push({ start, bytes: chunk });
    // Drop the oldest while the ones after it still cover MAX_PACKET_LENGTH before the current chunk.
    while (this.chunks.length > 2 && start - this.chunks[1]!.start >= MAX_PACKET_LENGTH) this.chunks.shift();
  }

  read(offset: number, length: number): Uint8Array {
    const end = offset + length;
    const last = this.chunks[this.chunks.length - 1];
    if (last && offset >= last.start) return last.bytes.subarray(offset - last.start, end - last.start);
    const out = new Uint8Array(length);
    for (const c of this.chunks) {
      const from = Math.max(offset, c.start);
      const to = Math.min(end, c.start + c.bytes.byteLength);
      if (from < to) out.set(c.bytes.subarray(from - c.start, to - c.start), from - offset);
    }
    return out;
  }
}

/**
 * Ingest a stream of packets of any length (an uploaded pass file): decoded as it arrives,
 * stored in transactions of at most ~100 000 packets or ~32 MiB, never held whole in memory,
 * however much of it is rejected.
 */
export async function ingestStream(
  pool: pg.Pool,
  db: Kysely<Database>,
  source: AsyncIterable<Uint8Array>,
  meta: { spacecraftId: number; stationId: number | null; uploadId: number },
  onProgress?: (bytes: number) => void,
): Promise<StreamReport> {
  const total: StreamReport = { accepted: 0, duplicates: 0, rejected: [], gaps: [], bytes: 0, idle: 0, rejectedCount: 0, rejectedOmitted: 0, gapCount: 0, gapsOmitted: 0 };
  const ctx = { loopIds: await loopIdsOf(db, meta.spacecraftId) };
  const recent = new StreamWindow();
  const newBatch = async () => {
    const b = new PacketBatch(meta.spacecraftId, await reserveBatchId(pool));
    b.rawSource = (offset, length) => recent.read(offset, length);
    return b;
  };
  let batch = await newBatch();
  // One visitor forwards into whichever batch is current.
  const decoder = new PacketStreamDecoder(ctx, {
    record: (rec, offset, length) => batch.record(rec, offset, length),
    reject: (offset, reason, raw) => batch.reject(offset, reason, raw),
    idle: () => batch.idle(),
  });
  let bytes = 0;
  const flush = async () => {
    if (batch.packets === 0) return;
    total.idle += batch.idleCount;
    mergeReports(total, await storeBatch(pool, batch, { ...meta, source: 'upload' }));
    batch = await newBatch();
  };
  for await (const chunk of source) {
    recent.next(chunk, bytes);
    decoder.push(chunk);
    bytes += chunk.byteLength;
    batch.bytes += chunk.byteLength;
    onProgress?.(bytes);
    if (batch.packets >= UPLOAD_BATCH_PACKETS || batch.bytes + batch.rejectedBytes >= UPLOAD_BATCH_BYTES) await flush();
  }
  decoder.end();
  await flush();
  total.bytes = bytes;
  return total;
}
