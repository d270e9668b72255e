import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { EPOCH_2000_UNIX_S } from '../telemetry';

type Db = Kysely<Database> | Transaction<Database>;

/** How many leading octets of a quarantined packet the link page shows. */
export const QUARANTINE_HEAD_OCTETS = 16;

/** One ingest request or upload chunk as the link page shows it. */
export interface LinkBatch {
  id: number;
  receivedAt: string;
  station: string | null;
  stationName: string | null;
  source: 'post' | 'upload';
  uploadId: number | null;
  bytes: number;
  accepted: number;
  duplicates: number;
  rejected: number;
  idle: number;
  realtime: number;
  playback: number;
  /** Sample time of the earliest and latest packet of the batch (UTC), when it had any. */
  firstAt: string | null;
  lastAt: string | null;
}

/** An open run of missing sequence counts of one APID. */
export interface LinkGap {
  id: number;
  apid: number;
  from: number;
  to: number;
  missing: number;
  /** Sample times of the stored packets on either side of the gap (UTC). */
  afterAt: string;
  beforeAt: string;
  detectedAt: string;
}

/** A refused packet kept for forensics. */
export interface LinkQuarantined {
  id: number;
  receivedAt: string;
  batchId: number | null;
  offset: number;
  reason: string;
  length: number;
  /** The first QUARANTINE_HEAD_OCTETS octets, lower-case hex. */
  headHex: string;
}

export interface LinkView {
  batches: LinkBatch[];
  gaps: LinkGap[];
  openGapCount: number;
  quarantined: LinkQuarantined[];
  quarantinedCount: number;
}

/** A contract time tag (2^-16 s since 2000-01-01T00:00:00Z) as ISO 8601 UTC. */
export function timeTagToIso(timeTag: number): string {
  return new Date((EPOCH_2000_UNIX_S + timeTag / 65536) * 1000).toISOString();
}

/** The most recent ingest batches of a spacecraft, newest first. */
export async function listRecentBatches(db: Db, spacecraftId: number, limit = 25): Promise<LinkBatch[]> {
  const rows = await db
    .selectFrom('ingest_batch as b')
    .leftJoin('ground_station as g', 'g.id', 'b.station_id')
    .select([
      'b.id',
      'b.received_at',
      'g.key as station',
      'g.name as station_name',
      'b.source',
      'b.upload_id',
      'b.bytes',
      'b.accepted',
      'b.duplicates',
      'b.rejected',
      'b.idle',
      'b.realtime',
      'b.playback',
      'b.first_time_tag',
      'b.last_time_tag',
    ])
    .where('b.spacecraft_id', '=', spacecraftId)
    .orderBy('b.received_at', 'desc')
    .orderBy('b.id', 'desc')
    .limit(limit)
    .execute();
  return rows.map((r) => ({
    id: r.id,
    receivedAt: r.received_at.toISOString(),
    station: r.station,
    stationName: r.station_name,
    source: r.source,
    uploadId: r.upload_id,
    bytes: Number(r.bytes),
    accepted: r.accepted,
    duplicates: r.duplicates,
    rejected: r.rejected,
    idle: r.idle,
    realtime: r.realtime,
    playback: r.playback,
    firstAt: r.first_time_tag === null ? null : timeTagToIso(Number(r.first_time_tag)),
    lastAt: r.last_time_tag === null ? null : timeTagToIso(Number(r.last_time_tag)),
  }));
}

/** Sequence gaps not yet filled by later playback, newest first, with their total count. */
export async function listOpenGaps(db: Db, spacecraftId: number, limit = 50): Promise<{ gaps: LinkGap[]; total: number }> {
  const [rows, count] = await Promise.all([
    db
      .selectFrom('sequence_gap')
      .select(['id', 'apid', 'from_seq', 'to_seq', 'missing', 'after_time_tag', 'before_time_tag', 'detected_at'])
      .where('spacecraft_id', '=', spacecraftId)
      .where('filled_at', 'is', null)
      .orderBy('before_time_tag', 'desc')
      .limit(limit)
      .execute(),
    db
      .selectFrom('sequence_gap')
      .select((eb) => eb.fn.countAll<number>().as('n'))
      .where('spacecraft_id', '=', spacecraftId)
      .where('filled_at', 'is', null)
      .executeTakeFirstOrThrow(),
  ]);
  return {
    total: Number(count.n),
    gaps: rows.map((r) => ({
      id: Number(r.id),
      apid: r.apid,
      from: r.from_seq,
      to: r.to_seq,
      missing: r.missing,
      afterAt: timeTagToIso(Number(r.after_time_tag)),
      beforeAt: timeTagToIso(Number(r.before_time_tag)),
      detectedAt: r.detected_at.toISOString(),
    })),
  };
}

/** The most recently quarantined packets, newest first, with their leading octets in hex. */
export async function listRecentQuarantined(db: Db, spacecraftId: number, limit = 50): Promise<{ quarantined: LinkQuarantined[]; total: number }> {
  const [rows, count] = await Promise.all([
    db
      .selectFrom('quarantine_packet as q')
      .select([
        'q.id',
        'q.received_at',
        'q.batch_id',
        'q.offset_bytes',
        'q.reason',
        sql<number>`octet_length(q.raw)`.as('length'),
        sql<string>`encode(substring(q.raw from 1 for ${sql.lit(QUARANTINE_HEAD_OCTETS)}), 'hex')`.as('head_hex'),
      ])
      .where('q.spacecraft_id', '=', spacecraftId)
      .orderBy('q.received_at', 'desc')
      .orderBy('q.id', 'desc')
      .limit(limit)
      .execute(),
    db
      .selectFrom('quarantine_packet')
      .select((eb) => eb.fn.countAll<number>().as('n'))
      .where('spacecraft_id', '=', spacecraftId)
      .executeTakeFirstOrThrow(),
  ]);
  return {
    total: Number(count.n),
    quarantined: rows.map((r) => ({
      id: Number(r.id),
      receivedAt: r.received_at.toISOString(),
      batchId: r.batch_id,
      offset: Number(r.offset_bytes),
      reason: r.reason,
      length: Number(r.length),
      headHex: r.head_hex,
    })),
  };
}

/** Everything the link page of one spacecraft shows: recent batches, open gaps, quarantine. */
export async function findLinkView(db: Db, spacecraftId: number): Promise<LinkView> {
  const [batches, gaps, quarantine] = await Promise.all([
    listRecentBatches(db, spacecraftId),
    listOpenGaps(db, spacecraftId),
    listRecentQuarantined(db, spacecraftId),
  ]);
  return { batches, gaps: gaps.gaps, openGapCount: gaps.total, quarantined: quarantine.quarantined, quarantinedCount: quarantine.total };
}

/** Every ground station (key and name), by name. */
export function listGroundStations(db: Db) {
  return db.selectFrom('ground_station').select(['key', 'name']).orderBy('name').execute();
}
