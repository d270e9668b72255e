import { sql, type Kysely } from 'kysely';

// Derived per-window series, job bookkeeping, limit sets and trips.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`CREATE TABLE loop_window (
    spacecraft_id integer NOT NULL REFERENCES spacecraft(id) ON DELETE CASCADE,
    loop_id smallint NOT NULL,
    window_start timestamptz NOT NULL,
    window_s integer NOT NULL,
    sheet_id integer REFERENCES spacecraft_sheet(id) ON DELETE SET NULL,
    samples integer NOT NULL,
    current_mean_a double precision, current_std_a double precision, commanded_mean_a double precision,
    flow_mean_m_s double precision,
    kt_nm_per_a double precision, kt_stderr_nm_per_a double precision,
    effectiveness double precision, effectiveness_stderr double precision, compensated_effectiveness double precision,
    pressure_constant_pa_per_a double precision, pressure_constant_stderr_pa_per_a double precision, pressure_effectiveness double precision,
    pressure_mean_pa double precision,
    resistance_ohm double precision, joule_power_w double precision, electrical_power_w double precision,
    fluid_temp_mean_c double precision, electrode_temp_mean_c double precision, magnet_temp_mean_c double precision,
    rate_of_rise_k_s double precision, thermal_residual_k double precision, time_to_temp_limit_s double precision,
    momentum_mean_nms double precision, momentum_abs_mean_nms double precision, momentum_max_abs_nms double precision,
    margin_in_use_pct double precision, time_to_saturation_s double precision,
    fluid_torque_mean_nm double precision, fluid_torque_abs_mean_nm double precision,
    torque_per_watt_nm_per_w double precision, momentum_per_watt_nms_per_w double precision,
    drift_ewma double precision, drift_ewma_ucl double precision, drift_ewma_lcl double precision,
    drift_cusum_hi double precision, drift_cusum_lo double precision,
    analysed_at timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (spacecraft_id, loop_id, window_start)
  )`.execute(db);

  await sql`CREATE TABLE body_window (
    spacecraft_id integer NOT NULL REFERENCES spacecraft(id) ON DELETE CASCADE,
    window_start timestamptz NOT NULL,
    window_s integer NOT NULL,
    samples integer NOT NULL,
    rate_mean_x_rad_s double precision, rate_mean_y_rad_s double precision, rate_mean_z_rad_s double precision,
    body_momentum_x_nms double precision, body_momentum_y_nms double precision, body_momentum_z_nms double precision,
    loop_momentum_x_nms double precision, loop_momentum_y_nms double precision, loop_momentum_z_nms double precision,
    system_momentum_nms double precision,
    ledger_x_nm double precision, ledger_y_nm double precision, ledger_z_nm double precision,
    ledger_stderr_x_nm double precision, ledger_stderr_y_nm double precision, ledger_stderr_z_nm double precision,
    ledger_residual_nm double precision,
    mag_field_nt double precision,
    analysed_at timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (spacecraft_id, window_start)
  )`.execute(db);

  await sql`CREATE TABLE burst_analysis (
    spacecraft_id integer NOT NULL REFERENCES spacecraft(id) ON DELETE CASCADE,
    loop_id smallint NOT NULL,
    channel smallint NOT NULL,
    t timestamptz NOT NULL,
    sample_rate_hz integer NOT NULL,
    samples integer NOT NULL,
    mean double precision NOT NULL,
    rms double precision NOT NULL,
    top_peak_hz double precision,
    top_peak_amplitude double precision,
    band_power double precision,
    peaks jsonb NOT NULL,
    frequencies_hz real[] NOT NULL,
    psd real[] NOT NULL,
    analysed_at timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (spacecraft_id, loop_id, channel, t)
  )`.execute(db);

  // The analysis job's position: every ingest batch up to this id has been analysed.
  await db.schema
    .createTable('analysis_cursor')
    .addColumn('spacecraft_id', 'integer', (c) => c.primaryKey().references('spacecraft.id').onDelete('cascade'))
    .addColumn('last_batch_id', 'integer', (c) => c.notNull().defaultTo(0))
    .addColumn('updated_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .execute();

  await db.schema
    .createTable('job_run')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('job', 'text', (c) => c.notNull())
    .addColumn('spacecraft_id', 'integer', (c) => c.references('spacecraft.id').onDelete('cascade'))
    .addColumn('started_at', 'timestamptz', (c) => c.notNull())
    .addColumn('finished_at', 'timestamptz')
    .addColumn('windows', 'integer', (c) => c.notNull().defaultTo(0))
    .addColumn('rows_written', 'integer', (c) => c.notNull().defaultTo(0))
    .addColumn('detail', 'jsonb', (c) => c.notNull().defaultTo(sql`'{}'::jsonb`))
    .addColumn('error', 'text')
    .execute();
  await db.schema.createIndex('job_run_started_idx').on('job_run').column('started_at').execute();

  await db.schema
    .createTable('limit_set')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('version', 'integer', (c) => c.notNull())
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('status', 'text', (c) => c.notNull().check(sql`status IN ('draft', 'in review', 'active', 'retired')`))
    .addColumn('notes', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('created_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('activated_at', 'timestamptz')
    .addColumn('retired_at', 'timestamptz')
    .addUniqueConstraint('limit_set_version_key', ['spacecraft_id', 'version'])
    .execute();
  await sql`CREATE UNIQUE INDEX limit_set_one_active ON limit_set (spacecraft_id) WHERE status = 'active'`.execute(db);

  await db.schema
    .createTable('limit_rule')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('limit_set_id', 'integer', (c) => c.notNull().references('limit_set.id').onDelete('cascade'))
    .addColumn('quantity', 'text', (c) => c.notNull())
    .addColumn('loop_id', 'smallint')
    .addColumn('caution_high', 'double precision')
    .addColumn('warning_high', 'double precision')
    .addColumn('caution_low', 'double precision')
    .addColumn('warning_low', 'double precision')
    .addColumn('clear_high', 'double precision')
    .addColumn('clear_low', 'double precision')
    .addColumn('persistence', 'integer', (c) => c.notNull().check(sql`persistence >= 1`))
    .addColumn('rationale', 'text', (c) => c.notNull().defaultTo(''))
    .execute();

  await db.schema
    .createTable('trip')
    .addColumn('id', 'serial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('loop_id', 'smallint')
    .addColumn('kind', 'text', (c) => c.notNull())
    .addColumn('quantity', 'text', (c) => c.notNull())
    .addColumn('level', 'text', (c) => c.notNull().check(sql`level IN ('caution', 'warning')`))
    .addColumn('side', 'text', (c) => c.notNull().check(sql`side IN ('high', 'low')`))
    .addColumn('state', 'text', (c) => c.notNull().defaultTo('open').check(sql`state IN ('open', 'acknowledged', 'resolved')`))
    .addColumn('limit_set_id', 'integer', (c) => c.references('limit_set.id').onDelete('set null'))
    .addColumn('limit_set_version', 'integer', (c) => c.notNull())
    .addColumn('rule_id', 'integer', (c) => c.references('limit_rule.id').onDelete('set null'))
    .addColumn('onset_at', 'timestamptz', (c) => c.notNull())
    .addColumn('raised_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addColumn('escalated_at', 'timestamptz')
    .addColumn('cleared_at', 'timestamptz')
    .addColumn('value', 'double precision', (c) => c.notNull())
    .addColumn('peak_value', 'double precision', (c) => c.notNull())
    .addColumn('limit_value', 'double precision', (c) => c.notNull())
    .addColumn('last_value', 'double precision', (c) => c.notNull())
    .addColumn('last_at', 'timestamptz', (c) => c.notNull())
    .addColumn('evidence', 'jsonb', (c) => c.notNull().defaultTo(sql`'{}'::jsonb`))
    .addColumn('acknowledged_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('acknowledged_at', 'timestamptz')
    .addColumn('acknowledge_note', 'text')
    .addColumn('resolved_by', 'text', (c) => c.references('app_user.id').onDelete('set null'))
    .addColumn('resolved_at', 'timestamptz')
    .addColumn('resolution', 'text')
    .execute();
  await db.schema.createIndex('trip_sc_state_idx').on('trip').columns(['spacecraft_id', 'state', 'onset_at']).execute();
  // At most one uncleared trip per rule and loop: a condition that lasts is one record.
  await sql`CREATE UNIQUE INDEX trip_one_live_per_rule ON trip (rule_id, coalesce(loop_id, -1)) WHERE cleared_at IS NULL`.execute(db);

  // Where each rule's evaluation stands per loop, so the scheduler continues without re-raising.
  await db.schema
    .createTable('rule_cursor')
    .addColumn('rule_id', 'integer', (c) => c.notNull().references('limit_rule.id').onDelete('cascade'))
    .addColumn('loop_id', 'smallint', (c) => c.notNull())
    .addColumn('evaluated_through', 'timestamptz', (c) => c.notNull())
    .addColumn('state', 'jsonb', (c) => c.notNull())
    .addPrimaryKeyConstraint('rule_cursor_pkey', ['rule_id', 'loop_id'])
    .execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const t of ['rule_cursor', 'trip', 'limit_rule', 'limit_set', 'job_run', 'analysis_cursor', 'burst_analysis', 'body_window', 'loop_window']) {
    await db.schema.dropTable(t).ifExists().cascade().execute();
  }
}
