import { sql, type Kysely } from 'kysely';

// Telemetry storage: one typed table per packet kind, natively partitioned by sample time (daily
// partitions, created ahead by the app). The primary key carries the sameness rule of the
// contract — spacecraft, (table = APID), sequence count, time tag — plus the partition key t,
// which PostgreSQL requires and which is a pure function of the time tag.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('ingest_token')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('label', 'text', (c) => c.notNull())
    .addColumn('token_hash', 'text', (c) => c.notNull().unique())
    .addColumn('token_hint', 'text', (c) => c.notNull())
    .addColumn('created_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('last_used_at', 'timestamptz')
    .addColumn('revoked_at', 'timestamptz')
    .execute();

  await db.schema
    .createTable('packet_upload')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('file_name', 'text', (c) => c.notNull())
    .addColumn('stored_path', 'text', (c) => c.notNull())
    .addColumn('bytes', 'bigint', (c) => c.notNull().defaultTo(0))
    .addColumn('sha256', 'text')
    .addColumn('station_id', 'integer', (c) => c.references('ground_station.id').onDelete('set null'))
    .addColumn('uploaded_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('uploaded_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('status', 'text', (c) => c.notNull().defaultTo('receiving').check(sql`status IN ('receiving', 'done', 'failed')`))
    .addColumn('report', 'jsonb')
    .execute();

  // One row per ingest request or upload chunk: what arrived, when, through which station.
  await db.schema
    .createTable('ingest_batch')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('station_id', 'integer', (c) => c.references('ground_station.id').onDelete('set null'))
    .addColumn('upload_id', 'integer', (c) => c.references('packet_upload.id').onDelete('set null'))
    .addColumn('source', 'text', (c) => c.notNull().check(sql`source IN ('post', 'upload')`))
    .addColumn('received_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('bytes', 'bigint', (c) => c.notNull())
    .addColumn('accepted', 'integer', (c) => c.notNull())
    .addColumn('duplicates', 'integer', (c) => c.notNull())
    .addColumn('rejected', 'integer', (c) => c.notNull())
    .addColumn('idle', 'integer', (c) => c.notNull())
    .addColumn('realtime', 'integer', (c) => c.notNull())
    .addColumn('playback', 'integer', (c) => c.notNull())
    .addColumn('first_time_tag', 'bigint')
    .addColumn('last_time_tag', 'bigint')
    .execute();
  await db.schema.createIndex('ingest_batch_sc_received_idx').on('ingest_batch').columns(['spacecraft_id', 'received_at']).execute();

  const common = (t: string) => sql.raw(`
    spacecraft_id integer NOT NULL REFERENCES spacecraft(id) ON DELETE CASCADE,
    t timestamptz NOT NULL,
    time_tag bigint NOT NULL,
    seq integer NOT NULL CHECK (seq BETWEEN 0 AND 16383),
    batch_id integer NOT NULL,
    CONSTRAINT ${t}_pkey PRIMARY KEY (spacecraft_id, time_tag, seq, t)`);

  await sql`CREATE TABLE attitude_sample (${common('attitude_sample')},
    mode smallint NOT NULL,
    rate_x_rad_s real NOT NULL, rate_y_rad_s real NOT NULL, rate_z_rad_s real NOT NULL,
    q1 real NOT NULL, q2 real NOT NULL, q3 real NOT NULL, q4 real NOT NULL,
    mag_x_nt real NOT NULL, mag_y_nt real NOT NULL, mag_z_nt real NOT NULL
  ) PARTITION BY RANGE (t)`.execute(db);

  await sql`CREATE TABLE loop_sample (${common('loop_sample')},
    loop_id smallint NOT NULL,
    status smallint NOT NULL,
    commanded_current_a real NOT NULL,
    measured_current_a real NOT NULL,
    electrode_voltage_v real NOT NULL,
    flow_velocity_m_s real NOT NULL,
    pressure_rise_pa real NOT NULL,
    fluid_temp_c real NOT NULL,
    electrode_temp_c real NOT NULL,
    magnet_temp_c real NOT NULL
  ) PARTITION BY RANGE (t)`.execute(db);

  // Physical value = raw × scale + offset; raw samples kept exactly as sent.
  await sql`CREATE TABLE burst_capture (${common('burst_capture')},
    loop_id smallint NOT NULL,
    channel smallint NOT NULL,
    sample_rate_hz integer NOT NULL,
    sample_count integer NOT NULL,
    scale real NOT NULL,
    offset_value real NOT NULL,
    raw_samples smallint[] NOT NULL
  ) PARTITION BY RANGE (t)`.execute(db);

  // Event text: ASCII; a NUL octet (which PostgreSQL text cannot hold) is stored as U+2400.
  await sql`CREATE TABLE event_report (${common('event_report')},
    severity smallint NOT NULL,
    code integer NOT NULL,
    loop_id smallint,
    text text NOT NULL
  ) PARTITION BY RANGE (t)`.execute(db);

  await db.schema
    .createTable('quarantine_packet')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('batch_id', 'integer', (c) => c.references('ingest_batch.id').onDelete('set null'))
    .addColumn('received_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('offset_bytes', 'bigint', (c) => c.notNull())
    .addColumn('reason', 'text', (c) => c.notNull())
    .addColumn('raw', 'bytea', (c) => c.notNull())
    .execute();
  await db.schema.createIndex('quarantine_sc_idx').on('quarantine_packet').columns(['spacecraft_id', 'received_at']).execute();

  // A run of missing sequence counts between two stored packets of one APID.
  await db.schema
    .createTable('sequence_gap')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('apid', 'smallint', (c) => c.notNull())
    .addColumn('from_seq', 'integer', (c) => c.notNull())
    .addColumn('to_seq', 'integer', (c) => c.notNull())
    .addColumn('missing', 'integer', (c) => c.notNull())
    .addColumn('after_time_tag', 'bigint', (c) => c.notNull())
    .addColumn('before_time_tag', 'bigint', (c) => c.notNull())
    .addColumn('detected_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('filled_at', 'timestamptz')
    .addUniqueConstraint('sequence_gap_span_key', ['spacecraft_id', 'apid', 'after_time_tag', 'before_time_tag'])
    .execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const t of ['sequence_gap', 'quarantine_packet', 'event_report', 'burst_capture', 'loop_sample', 'attitude_sample', 'ingest_batch', 'packet_upload', 'ingest_token']) {
    await db.schema.dropTable(t).ifExists().cascade().execute();
  }
}
