import type pg from 'pg';
import copyStreams from 'pg-copy-streams';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import { BinaryCopyWriter } from './copy-binary';
import {
  APID,
  EPOCH_2000_UNIX_S,
  encodePacket,
  type PacketVisitor,
  type RejectReason,
  type TelemetryRecord,
} from '../telemetry';

const DAY_MS = 86_400_000;
/** A packet counts as real time when it arrives within this long of its time tag. */
export const REALTIME_WINDOW_MS = 60_000;
/**
 * A time tag is the time of a sample, so it cannot lie after the packet arrives; one more than
 * this far after the ground clock is refused 'time tag in future' (and quarantined). The margin
 * allows for an on-board clock that runs ahead of the ground. It also bounds how far ahead of
 * today any request can make the store create daily partitions.
 */
export const FUTURE_TOLERANCE_MS = 86_400_000;

/** The tables behind each APID, with their value columns in COPY order. */
export const PACKET_TABLES = {
  [APID.attitude]: {
    table: 'attitude_sample',
    columns: ['mode', 'rate_x_rad_s', 'rate_y_rad_s', 'rate_z_rad_s', 'q1', 'q2', 'q3', 'q4', 'mag_x_nt', 'mag_y_nt', 'mag_z_nt'],
  },
  [APID.loop]: {
    table: 'loop_sample',
    columns: ['loop_id', 'status', 'commanded_current_a', 'measured_current_a', 'electrode_voltage_v', 'flow_velocity_m_s', 'pressure_rise_pa', 'fluid_temp_c', 'electrode_temp_c', 'magnet_temp_c'],
  },
  [APID.burst]: {
    table: 'burst_capture',
    columns: ['loop_id', 'channel', 'sample_rate_hz', 'sample_count', 'scale', 'offset_value', 'raw_samples'],
  },
  [APID.event]: {
    table: 'event_report',
    columns: ['severity', 'code', 'loop_id', 'text'],
  },
} as const;

type StoredApid = keyof typeof PACKET_TABLES;
const STORED_APIDS = Object.keys(PACKET_TABLES).map(Number) as StoredApid[];

const COMMON_COLUMNS = ['spacecraft_id', 't', 'time_tag', 'seq', 'batch_id'] as const;

/** Every column of a packet table in COPY order. */
export function copyColumns(apid: StoredApid): string[] {
  return [...COMMON_COLUMNS, ...PACKET_TABLES[apid].columns];
}

/** Sample time in microseconds since 2000-01-01 (the timestamptz binary form): exact integer arithmetic. */
export function timeTagMicros(coarse: number, fine: number): number {
  return coarse * 1_000_000 + Math.round(fine * 15.2587890625);
}

export interface Rejection {
  offset: number;
  reason: RejectReason;
  raw: Uint8Array;
}

/**
 * Collects one batch of decoded packets as binary COPY data, ready for storeBatch. It is the
 * decoder's visitor, so a request body goes from bytes to COPY tuples without other copies.
 */
export class PacketBatch implements PacketVisitor {
  readonly copy = new Map<StoredApid, BinaryCopyWriter>(STORED_APIDS.map((a) => [a, new BinaryCopyWriter(a === APID.loop || a === APID.attitude ? 1 << 20 : 1 << 14)]));
  readonly days = new Set<number>();
  readonly rejected: Rejection[] = [];
  private readonly span = new Map<StoredApid, [number, number]>();
  idleCount = 0;
  valid = 0;
  realtime = 0;
  minTimeTag = Infinity;
  maxTimeTag = -Infinity;
  bytes = 0;
  /** Octets of the raw copies held in `rejected`. */
  rejectedBytes = 0;

  constructor(
    readonly spacecraftId: number,
    readonly batchId: number,
    private readonly nowMs = Date.now(),
  ) {}

  /**
   * The raw octets of the packet at a stream offset, for quarantining a packet that decoded but
   * is refused here. The caller that owns the bytes sets it; without it the packet is encoded
   * again from its fields (exact except for spare octets, which the decoder does not check).
   */
  rawSource: ((offset: number, length: number) => Uint8Array) | null = null;

  record(rec: TelemetryRecord, offset = 0, length = 0): void {
    const tt = rec.coarse * 65536 + rec.fine;
    const us = timeTagMicros(rec.coarse, rec.fine);
    if ((EPOCH_2000_UNIX_S * 1e6 + us) / 1000 > this.nowMs + FUTURE_TOLERANCE_MS) {
      this.reject(offset, 'time tag in future', this.rawSource && length > 0 ? this.rawSource(offset, length) : encodePacket(rec));
      return;
    }
    const apid = APID_OF[rec.kind];
    const w = this.copy.get(apid)!;
    w.tuple(5 + PACKET_TABLES[apid].columns.length).int4(this.spacecraftId).timestampUs(us).int8(tt).int4(rec.seq).int4(this.batchId);
    switch (rec.kind) {
      case 'attitude':
        w.int2(rec.mode).float4(rec.rate_rad_s[0]).float4(rec.rate_rad_s[1]).float4(rec.rate_rad_s[2]);
        w.float4(rec.quaternion[0]).float4(rec.quaternion[1]).float4(rec.quaternion[2]).float4(rec.quaternion[3]);
        w.float4(rec.mag_nT[0]).float4(rec.mag_nT[1]).float4(rec.mag_nT[2]);
        break;
      case 'loop':
        w.int2(rec.loopId).int2(rec.status).float4(rec.commandedCurrent_a).float4(rec.measuredCurrent_a).float4(rec.electrodeVoltage_v);
        w.float4(rec.flowVelocity_m_s).float4(rec.pressureRise_pa).float4(rec.fluidTemp_c).float4(rec.electrodeTemp_c).float4(rec.magnetTemp_c);
        break;
      case 'burst':
        w.int2(rec.loopId).int2(rec.channel).int4(rec.sampleRate_hz).int4(rec.raw.length).float4(rec.scale).float4(rec.offset).int2Array(rec.raw);
        break;
      case 'event':
        w.int2(rec.severity).int4(rec.code);
        if (rec.loopId === null) w.null();
        else w.int2(rec.loopId);
        // PostgreSQL text cannot hold NUL: it is stored as U+2400 (SYMBOL FOR NULL).
        w.text(rec.text.replaceAll('\0', '\u2400'));
        break;
    }
    const ms = (EPOCH_2000_UNIX_S * 1e6 + us) / 1000;
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
    this.rejected.push({ offset, reason, raw: Uint8Array.from(raw) });
    this.rejectedBytes += raw.byteLength;
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

const APID_OF: Record<TelemetryRecord['kind'], StoredApid> = {
  attitude: APID.attitude,
  loop: APID.loop,
  burst: APID.burst,
  event: APID.event,
};

/** Reserve the id of the next ingest batch (packets carry it, so it is needed before decoding). */
export async function reserveBatchId(pool: pg.Pool): Promise<number> {
  const r = await pool.query<{ id: number }>("SELECT nextval('ingest_batch_id_seq')::int AS id");
  return r.rows[0]!.id;
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

/** Key of the advisory lock that serialises partition creation across all processes. */
const PARTITION_LOCK = "hashtext('millrace.day-partitions')";

/**
 * Create the daily partitions that hold these days (idempotent, safe under concurrency).
 *
 * Two sessions running CREATE TABLE IF NOT EXISTS … PARTITION OF for one name at once can both
 * pass the existence check; the loser then fails on the catalog's unique index (23505) rather
 * than 42P07. So each partition is created in its own short transaction under one advisory lock,
 * which makes a second creator wait and then find the table; 23505 and 42P07 still count as
 * "exists" for any creator outside this function. One transaction per partition keeps the lock
 * on each parent table short and never holds two parents at once.
 */
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
      await client.query('BEGIN');
      try {
        await client.query(`SELECT pg_advisory_xact_lock(${PARTITION_LOCK})`);
        await client.query(`CREATE TABLE IF NOT EXISTS ${p.name} PARTITION OF ${p.table} FOR VALUES FROM ('${from}') TO ('${to}')`);
        await client.query('COMMIT');
      } catch (err) {
        await client.query('ROLLBACK').catch(() => undefined);
        const code = (err as { code?: string }).code;
        // Created by someone else between the check and the create.
        if (code !== '42P07' && code !== '23505') throw err;
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
    const t = PACKET_TABLES[apid].table;
    await client.query(`CREATE TEMP TABLE IF NOT EXISTS stage_${t} (LIKE ${t}) ON COMMIT DELETE ROWS`);
  }
  stagingReady.add(client);
}

async function copyInto(client: pg.PoolClient, table: string, columns: readonly string[], data: Uint8Array): Promise<void> {
  const stream = client.query(copyStreams.from(`COPY ${table} (${columns.join(', ')}) FROM STDIN (FORMAT binary)`));
  await pipeline(Readable.from([Buffer.from(data.buffer, data.byteOffset, data.byteLength)]), stream);
}

/**
 * Two stored packets of one APID are compared for a sequence gap only when they are at most this
 * far apart in time: beyond it the 14-bit count may have wrapped unseen, and a longer silence is a
 * coverage hole, reported as stale data instead. The window follows how fast each APID counts
 * through 16 384: the 10 Hz housekeeping (30 loop packets/s with three loops) wraps in about 9
 * minutes, so 5 minutes; burst captures and event reports come minutes apart, so an hour. Not
 * longer: after a silence of hours the spacecraft may well have restarted its counters (a reboot),
 * and that jump is not a run of lost packets.
 */
export const GAP_LINK_S: Record<StoredApid, number> = {
  [APID.attitude]: 300,
  [APID.loop]: 300,
  [APID.burst]: 3_600,
  [APID.event]: 3_600,
};

/** Advisory lock key (with the spacecraft id) that serialises gap bookkeeping per spacecraft. */
const GAP_LOCK = "hashtext('millrace.sequence-gaps')";

/** Packets of one APID stored from `from` to `to` (time tags, inclusive). */
async function countStored(client: pg.PoolClient, spacecraftId: number, apid: StoredApid, from: number, to: number): Promise<number> {
  const r = await client.query<{ n: number }>(`SELECT count(*)::int AS n FROM ${PACKET_TABLES[apid].table} WHERE spacecraft_id = $1 AND time_tag BETWEEN $2 AND $3`, [spacecraftId, from, to]);
  return Number(r.rows[0]!.n);
}

/** The time tags of the stored packets just before `from` and just after `to` (themselves when there are none). */
async function neighbours(client: pg.PoolClient, spacecraftId: number, apid: StoredApid, from: number, to: number): Promise<{ lo: number; hi: number }> {
  const table = PACKET_TABLES[apid].table;
  const r = await client.query<{ lo: number; hi: number }>(
    `SELECT coalesce((SELECT max(time_tag) FROM ${table} WHERE spacecraft_id = $1 AND time_tag < $2), $2::bigint) AS lo,
            coalesce((SELECT min(time_tag) FROM ${table} WHERE spacecraft_id = $1 AND time_tag > $3), $3::bigint) AS hi`,
    [spacecraftId, from, to],
  );
  return { lo: Number(r.rows[0]!.lo), hi: Number(r.rows[0]!.hi) };
}

/** Sequence gaps between consecutive stored packets of one APID from `lo` to `hi` (time tags, inclusive). */
async function findGaps(client: pg.PoolClient, spacecraftId: number, apid: StoredApid, lo: number, hi: number) {
  const table = PACKET_TABLES[apid].table;
  // Packets of one time tag (several loops sampled at once) whose counts straddle the 14-bit wrap
  // are ordered as if the small counts came after 16383.
  const r = await client.query<{ ptt: number; pseq: number; tt: number; seq: number }>(
    `SELECT ptt, pseq, tt, seq FROM (
       SELECT tt, seq, lag(tt) OVER w AS ptt, lag(seq) OVER w AS pseq FROM (
         SELECT time_tag AS tt, seq,
                CASE WHEN max(seq) OVER g - min(seq) OVER g > 8192 AND seq < 8192 THEN seq + 16384 ELSE seq END AS k
         FROM ${table} WHERE spacecraft_id = $1 AND time_tag BETWEEN $2 AND $3
         WINDOW g AS (PARTITION BY time_tag)
       ) y
       WINDOW w AS (ORDER BY tt, k)
     ) x
     WHERE pseq IS NOT NULL AND ((seq - pseq + 16384) % 16384) > 1 AND tt - ptt <= $4
     ORDER BY tt`,
    [spacecraftId, lo, hi, GAP_LINK_S[apid] * 65536],
  );
  return r.rows;
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
      `INSERT INTO ingest_batch (id, spacecraft_id, station_id, upload_id, source, bytes, accepted, duplicates, rejected, idle, realtime, playback, first_time_tag, last_time_tag)
       VALUES ($12, $1, $2, $3, $4, $5, 0, 0, $6, $7, $8, $9, $10, $11) RETURNING id`,
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
        batch.batchId,
      ],
    );
    const batchId = b.rows[0]!.id;
    const todo = STORED_APIDS.filter((apid) => batch.copy.get(apid)!.rows > 0);
    const data = new Map(todo.map((apid) => [apid, batch.copy.get(apid)!.finish()]));
    // Fast path: COPY straight into the tables. A duplicate (retry, overlapping dump) makes the
    // COPY fail on the primary key; then the batch goes through staging with ON CONFLICT DO NOTHING.
    let accepted = 0;
    await client.query('SAVEPOINT direct_copy');
    try {
      for (const apid of todo) await copyInto(client, PACKET_TABLES[apid].table, copyColumns(apid), data.get(apid)!);
      await client.query('RELEASE SAVEPOINT direct_copy');
      accepted = batch.valid;
    } catch (err) {
      if ((err as { code?: string }).code !== '23505') throw err;
      await client.query('ROLLBACK TO SAVEPOINT direct_copy');
      await ensureStaging(client);
      for (const apid of todo) {
        const t = PACKET_TABLES[apid].table;
        await copyInto(client, `stage_${t}`, copyColumns(apid), data.get(apid)!);
        const ins = await client.query(`INSERT INTO ${t} SELECT * FROM stage_${t} ON CONFLICT DO NOTHING`);
        accepted += ins.rowCount ?? 0;
      }
    }
    const gaps: Gap[] = [];
    // Gaps inside and at the edges of this batch's span, from what is stored now. The search inside
    // the span (the costly part) runs in parallel with other requests. The rest runs under a
    // per-spacecraft advisory lock held to COMMIT: the inside is searched again only if packets were
    // committed into the span meanwhile (its count changed; packets are never removed here), the
    // edges (the neighbours just outside the span) are always searched then. So of two requests
    // committing at once (a live pass and a playback, two stations), the second always judges with
    // the first one's packets and gap rows, and no gap stays open that the other filled.
    const inside = new Map<StoredApid, { minTt: number; maxTt: number; n: number; found: Awaited<ReturnType<typeof findGaps>> }>();
    for (const apid of todo) {
      const [minTt, maxTt] = batch.spanOf(apid)!;
      inside.set(apid, { minTt, maxTt, n: await countStored(client, meta.spacecraftId, apid, minTt, maxTt), found: await findGaps(client, meta.spacecraftId, apid, minTt, maxTt) });
    }
    if (todo.length) await client.query(`SELECT pg_advisory_xact_lock(${GAP_LOCK}, $1)`, [meta.spacecraftId]);
    for (const apid of todo) {
      const { minTt, maxTt, n } = inside.get(apid)!;
      let within = inside.get(apid)!.found;
      const nNow = await countStored(client, meta.spacecraftId, apid, minTt, maxTt);
      if (nNow !== n) within = await findGaps(client, meta.spacecraftId, apid, minTt, maxTt);
      const { lo, hi } = await neighbours(client, meta.spacecraftId, apid, minTt, maxTt);
      const found = [
        ...(lo < minTt ? (await findGaps(client, meta.spacecraftId, apid, lo, minTt)).filter((g) => g.ptt < minTt) : []),
        ...within,
        ...(hi > maxTt ? (await findGaps(client, meta.spacecraftId, apid, maxTt, hi)).filter((g) => g.tt > maxTt) : []),
      ];
      if (found.length) {
        const rows = found.map((g) => ({ from: (g.pseq + 1) % 16384, to: (g.seq + 16383) % 16384, missing: ((g.seq - g.pseq + 16384) % 16384) - 1, after: g.ptt, before: g.tt }));
        for (const r of rows) gaps.push({ apid, from: r.from, to: r.to });
        await client.query(
          `INSERT INTO sequence_gap (spacecraft_id, apid, from_seq, to_seq, missing, after_time_tag, before_time_tag)
           SELECT $1, $2, f, t, m, a, b FROM unnest($3::int[], $4::int[], $5::int[], $6::bigint[], $7::bigint[]) AS g(f, t, m, a, b)
           ON CONFLICT DO NOTHING`,
          [meta.spacecraftId, apid, rows.map((r) => r.from), rows.map((r) => r.to), rows.map((r) => r.missing), rows.map((r) => r.after), rows.map((r) => r.before)],
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
