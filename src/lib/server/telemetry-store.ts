import type pg from 'pg';
import copyStreams from 'pg-copy-streams';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import {
  APID,
  EPOCH_2000_UNIX_S,
  type PacketVisitor,
  type RejectReason,
  type TelemetryRecord,
} from '../telemetry';

const DAY_MS = 86_400_000;
/** A packet counts as real time when it arrives within this long of its time tag. */
export const REALTIME_WINDOW_MS = 60_000;

/** The tables behind each APID, with their value columns in COPY order. */
export const PACKET_TABLES = {
  [APID.attitude]: {
    table: 'attitude_sample',
    columns: ['mode', 'rate_x_rad_s', 'rate_y_rad_s', 'rate_z_rad_s', 'q1', 'q2', 'q3', 'q4', 'mag_x_nt', 'mag_y_nt', 'mag_z_nt'],
    types: ['smallint', 'real', 'real', 'real', 'real', 'real', 'real', 'real', 'real', 'real', 'real'],
  },
  [APID.loop]: {
    table: 'loop_sample',
    columns: ['loop_id', 'status', 'commanded_current_a', 'measured_current_a', 'electrode_voltage_v', 'flow_velocity_m_s', 'pressure_rise_pa', 'fluid_temp_c', 'electrode_temp_c', 'magnet_temp_c'],
    types: ['smallint', 'smallint', 'real', 'real', 'real', 'real', 'real', 'real', 'real', 'real'],
  },
  [APID.burst]: {
    table: 'burst_capture',
    columns: ['loop_id', 'channel', 'sample_rate_hz', 'sample_count', 'scale', 'offset_value', 'raw_samples'],
    types: ['smallint', 'smallint', 'integer', 'integer', 'real', 'real', 'smallint[]'],
  },
  [APID.event]: {
    table: 'event_report',
    columns: ['severity', 'code', 'loop_id', 'text'],
    types: ['smallint', 'integer', 'smallint', 'text'],
  },
} as const;

type StoredApid = keyof typeof PACKET_TABLES;
const STORED_APIDS = Object.keys(PACKET_TABLES).map(Number) as StoredApid[];

/** COPY text-format escaping for a text value (NUL, which text cannot hold, becomes U+2400). */
function copyText(s: string): string {
  return s.replace(/[\\\t\n\r\0]/g, (c) => (c === '\\' ? '\\\\' : c === '\t' ? '\\t' : c === '\n' ? '\\n' : c === '\r' ? '\\r' : '\u2400'));
}

function valueLine(rec: TelemetryRecord): { apid: StoredApid; line: string } {
  switch (rec.kind) {
    case 'attitude':
      return {
        apid: APID.attitude,
        line: `${rec.mode}\t${rec.rate_rad_s[0]}\t${rec.rate_rad_s[1]}\t${rec.rate_rad_s[2]}\t${rec.quaternion[0]}\t${rec.quaternion[1]}\t${rec.quaternion[2]}\t${rec.quaternion[3]}\t${rec.mag_nT[0]}\t${rec.mag_nT[1]}\t${rec.mag_nT[2]}`,
      };
    case 'loop':
      return {
        apid: APID.loop,
        line: `${rec.loopId}\t${rec.status}\t${rec.commandedCurrent_a}\t${rec.measuredCurrent_a}\t${rec.electrodeVoltage_v}\t${rec.flowVelocity_m_s}\t${rec.pressureRise_pa}\t${rec.fluidTemp_c}\t${rec.electrodeTemp_c}\t${rec.magnetTemp_c}`,
      };
    case 'burst':
      return {
        apid: APID.burst,
        line: `${rec.loopId}\t${rec.channel}\t${rec.sampleRate_hz}\t${rec.raw.length}\t${rec.scale}\t${rec.offset}\t{${rec.raw.join(',')}}`,
      };
    case 'event':
      return { apid: APID.event, line: `${rec.severity}\t${rec.code}\t${rec.loopId ?? '\\N'}\t${copyText(rec.text)}` };
  }
}

export interface Rejection {
  offset: number;
  reason: RejectReason;
  raw: Uint8Array;
}

/**
 * Collects one batch of decoded packets as COPY text, ready for storeBatch. It is the decoder's
 * visitor, so a request body goes from bytes to COPY lines without other copies.
 */
export class PacketBatch implements PacketVisitor {
  readonly lines = new Map<StoredApid, string[]>(STORED_APIDS.map((a) => [a, []]));
  readonly days = new Set<number>();
  readonly rejected: Rejection[] = [];
  private readonly span = new Map<StoredApid, [number, number]>();
  idleCount = 0;
  valid = 0;
  realtime = 0;
  minTimeTag = Infinity;
  maxTimeTag = -Infinity;
  bytes = 0;

  constructor(
    private readonly offsetBase = 0,
    private readonly nowMs = Date.now(),
  ) {}

  record(rec: TelemetryRecord): void {
    const { apid, line } = valueLine(rec);
    const tt = rec.coarse * 65536 + rec.fine;
    this.lines.get(apid)!.push(`${tt}\t${rec.seq}\t${line}\n`);
    const ms = (EPOCH_2000_UNIX_S + tt / 65536) * 1000;
    this.days.add(Math.floor(ms / DAY_MS));
    if (this.nowMs - ms < REALTIME_WINDOW_MS) this.realtime++;
    if (tt < this.minTimeTag) this.minTimeTag = tt;
    if (tt > this.maxTimeTag) this.maxTimeTag = tt;
    const sp = this.span.get(apid);
    if (!sp) this.span.set(apid, [tt, tt]);
    else {
      if (tt < sp[0]) sp[0] = tt;
      if (tt > sp[1]) sp[1] = tt;
    }
    this.valid++;
  }

  reject(offset: number, reason: RejectReason, raw: Uint8Array): void {
    // The raw view may point into a buffer that is reused; keep a copy for forensics.
    this.rejected.push({ offset: offset + this.offsetBase, reason, raw: Uint8Array.from(raw) });
  }

  idle(): void {
    this.idleCount++;
  }

  /** Earliest and latest time tag of this batch's packets of one APID. */
  spanOf(apid: StoredApid): [number, number] | undefined {
    return this.span.get(apid);
  }

  get packets(): number {
    return this.valid + this.rejected.length + this.idleCount;
  }
}

export interface Gap {
  apid: number;
  from: number;
  to: number;
}

export interface StoreResult {
  batchId: number;
  accepted: number;
  duplicates: number;
  rejected: { offset: number; reason: RejectReason }[];
  gaps: Gap[];
}

// ── partitions ──────────────────────────────────────────────────────────────────────────────
const knownPartitions = new Set<string>();

function dayName(day: number): string {
  return new Date(day * DAY_MS).toISOString().slice(0, 10).replaceAll('-', '');
}

/** Create the daily partitions that hold these days (idempotent, safe under concurrency). */
export async function ensureDayPartitions(pool: pg.Pool, days: Iterable<number>): Promise<void> {
  const todo: { table: string; name: string; day: number }[] = [];
  for (const day of days) {
    for (const apid of STORED_APIDS) {
      const table = PACKET_TABLES[apid].table;
      const name = `${table}_p${dayName(day)}`;
      if (!knownPartitions.has(name)) todo.push({ table, name, day });
    }
  }
  if (!todo.length) return;
  const client = await pool.connect();
  try {
    for (const p of todo) {
      const from = new Date(p.day * DAY_MS).toISOString();
      const to = new Date((p.day + 1) * DAY_MS).toISOString();
      try {
        await client.query(`CREATE TABLE IF NOT EXISTS ${p.name} PARTITION OF ${p.table} FOR VALUES FROM ('${from}') TO ('${to}')`);
      } catch (err) {
        // Another process created it between our check and our create.
        if ((err as { code?: string }).code !== '42P07') throw err;
      }
      knownPartitions.add(p.name);
    }
  } finally {
    client.release();
  }
}

/** Create partitions for today and the next `daysAhead` days. */
export function ensurePartitionsAhead(pool: pg.Pool, now: Date, daysAhead = 7): Promise<void> {
  const today = Math.floor(now.getTime() / DAY_MS);
  return ensureDayPartitions(pool, Array.from({ length: daysAhead + 1 }, (_, i) => today + i));
}

/** Forget the partition cache (tests that drop tables). */
export function forgetPartitions(): void {
  knownPartitions.clear();
}

// ── storing a batch ─────────────────────────────────────────────────────────────────────────
const stagingReady = new WeakSet<pg.PoolClient>();

async function ensureStaging(client: pg.PoolClient): Promise<void> {
  if (stagingReady.has(client)) return;
  for (const apid of STORED_APIDS) {
    const spec = PACKET_TABLES[apid];
    const cols = spec.columns.map((c, i) => `${c} ${spec.types[i]}`).join(', ');
    await client.query(`CREATE TEMP TABLE IF NOT EXISTS stage_${spec.table} (time_tag bigint, seq integer, ${cols}) ON COMMIT DELETE ROWS`);
  }
  stagingReady.add(client);
}

async function copyInto(client: pg.PoolClient, table: string, columns: readonly string[], lines: string[]): Promise<void> {
  const stream = client.query(copyStreams.from(`COPY ${table} (${columns.join(', ')}) FROM STDIN`));
  // Feed the lines in slices so a large batch never becomes one giant string.
  async function* chunks() {
    for (let i = 0; i < lines.length; i += 4096) yield lines.slice(i, i + 4096).join('');
  }
  await pipeline(Readable.from(chunks()), stream);
}

/** SQL that turns a time tag into the sample time (2000-01-01 epoch, 2^-16 s units). */
export const TIME_TAG_TO_T = `to_timestamp(${EPOCH_2000_UNIX_S} + time_tag / 65536.0)`;

/**
 * Two stored packets of one APID are compared for a sequence gap only when they are at most this
 * far apart in time: beyond it the 14-bit count may have wrapped unseen (at 30 packets/s it wraps
 * in about 9 minutes), and a longer silence is a coverage hole, reported as stale data instead.
 */
export const GAP_LINK_S = 300;

async function findGaps(client: pg.PoolClient, spacecraftId: number, table: string, minTt: number, maxTt: number) {
  const bounds = await client.query<{ lo: number | null; hi: number | null }>(
    `SELECT (SELECT max(time_tag) FROM ${table} WHERE spacecraft_id = $1 AND time_tag < $2) AS lo,
            (SELECT min(time_tag) FROM ${table} WHERE spacecraft_id = $1 AND time_tag > $3) AS hi`,
    [spacecraftId, minTt, maxTt],
  );
  const lo = bounds.rows[0]?.lo ?? minTt;
  const hi = bounds.rows[0]?.hi ?? maxTt;
  const r = await client.query<{ ptt: number; pseq: number; tt: number; seq: number }>(
    `SELECT ptt, pseq, tt, seq FROM (
       SELECT time_tag AS tt, seq, lag(time_tag) OVER w AS ptt, lag(seq) OVER w AS pseq
       FROM ${table} WHERE spacecraft_id = $1 AND time_tag BETWEEN $2 AND $3
       WINDOW w AS (ORDER BY time_tag, seq)
     ) x
     WHERE pseq IS NOT NULL AND ((seq - pseq + 16384) % 16384) > 1 AND tt - ptt <= $4
     ORDER BY tt`,
    [spacecraftId, lo, hi, GAP_LINK_S * 65536],
  );
  return { lo, hi, gaps: r.rows };
}

/**
 * Store one batch in one transaction: COPY into staging, insert with ON CONFLICT DO NOTHING
 * (duplicates are counted, never changed), quarantine the rejects, record sequence gaps.
 * Either all of the batch's valid packets are stored or none.
 */
export async function storeBatch(
  pool: pg.Pool,
  batch: PacketBatch,
  meta: { spacecraftId: number; stationId: number | null; source: 'post' | 'upload'; uploadId?: number | null; tokenId?: number | null },
): Promise<StoreResult> {
  await ensureDayPartitions(pool, batch.days);
  const client = await pool.connect();
  try {
    await ensureStaging(client);
    await client.query('BEGIN');
    const b = await client.query<{ id: number }>(
      `INSERT INTO ingest_batch (spacecraft_id, station_id, upload_id, source, bytes, accepted, duplicates, rejected, idle, realtime, playback, first_time_tag, last_time_tag)
       VALUES ($1, $2, $3, $4, $5, 0, 0, $6, $7, $8, $9, $10, $11) RETURNING id`,
      [
        meta.spacecraftId,
        meta.stationId,
        meta.uploadId ?? null,
        meta.source,
        batch.bytes,
        batch.rejected.length,
        batch.idleCount,
        batch.realtime,
        batch.valid - batch.realtime,
        Number.isFinite(batch.minTimeTag) ? batch.minTimeTag : null,
        Number.isFinite(batch.maxTimeTag) ? batch.maxTimeTag : null,
      ],
    );
    const batchId = b.rows[0]!.id;
    let accepted = 0;
    const gaps: Gap[] = [];
    for (const apid of STORED_APIDS) {
      const lines = batch.lines.get(apid)!;
      if (!lines.length) continue;
      const spec = PACKET_TABLES[apid];
      await copyInto(client, `stage_${spec.table}`, ['time_tag', 'seq', ...spec.columns], lines);
      const ins = await client.query(
        `INSERT INTO ${spec.table} (spacecraft_id, t, time_tag, seq, batch_id, ${spec.columns.join(', ')})
         SELECT $1, ${TIME_TAG_TO_T}, time_tag, seq, $2, ${spec.columns.join(', ')} FROM stage_${spec.table}
         ON CONFLICT DO NOTHING`,
        [meta.spacecraftId, batchId],
      );
      accepted += ins.rowCount ?? 0;
      // Gaps around and inside this batch's span, from what is stored now.
      const [minTt, maxTt] = batch.spanOf(apid)!;
      const { lo, hi, gaps: found } = await findGaps(client, meta.spacecraftId, spec.table, minTt, maxTt);
      for (const g of found) {
        const from = (g.pseq + 1) % 16384;
        const to = (g.seq + 16383) % 16384;
        const missing = (g.seq - g.pseq + 16384) % 16384 - 1;
        gaps.push({ apid, from, to });
        await client.query(
          `INSERT INTO sequence_gap (spacecraft_id, apid, from_seq, to_seq, missing, after_time_tag, before_time_tag)
           VALUES ($1, $2, $3, $4, $5, $6, $7) ON CONFLICT DO NOTHING`,
          [meta.spacecraftId, apid, from, to, missing, g.ptt, g.tt],
        );
      }
      // Open gaps inside the scanned span that no longer show are filled (late playback).
      await client.query(
        `UPDATE sequence_gap SET filled_at = now()
         WHERE spacecraft_id = $1 AND apid = $2 AND filled_at IS NULL AND after_time_tag >= $3 AND before_time_tag <= $4
           AND NOT (after_time_tag, before_time_tag) IN (SELECT * FROM unnest($5::bigint[], $6::bigint[]))`,
        [meta.spacecraftId, apid, lo, hi, found.map((g) => g.ptt), found.map((g) => g.tt)],
      );
    }
    if (batch.rejected.length) {
      await client.query(
        `INSERT INTO quarantine_packet (spacecraft_id, batch_id, offset_bytes, reason, raw)
         SELECT $1, $2, o, r, w FROM unnest($3::bigint[], $4::text[], $5::bytea[]) AS q(o, r, w)`,
        [meta.spacecraftId, batchId, batch.rejected.map((r) => r.offset), batch.rejected.map((r) => r.reason), batch.rejected.map((r) => Buffer.from(r.raw.buffer, r.raw.byteOffset, r.raw.byteLength))],
      );
    }
    const duplicates = batch.valid - accepted;
    await client.query('UPDATE ingest_batch SET accepted = $2, duplicates = $3 WHERE id = $1', [batchId, accepted, duplicates]);
    if (meta.tokenId) await client.query('UPDATE ingest_token SET last_used_at = now() WHERE id = $1', [meta.tokenId]);
    await client.query('COMMIT');
    return {
      batchId,
      accepted,
      duplicates,
      rejected: batch.rejected.map((r) => ({ offset: r.offset, reason: r.reason })),
      gaps,
    };
  } catch (err) {
    await client.query('ROLLBACK').catch(() => undefined);
    throw err;
  } finally {
    client.release();
  }
}
