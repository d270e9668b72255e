import { sql, type Kysely } from 'kysely';

// Predicted passes of each spacecraft over each ground station (SGP4 from the sheet's element set),
// and per spacecraft how far ahead they are stored and from which inputs.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('predicted_pass')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('spacecraft_id', 'integer', (c) => c.notNull().references('spacecraft.id').onDelete('cascade'))
    .addColumn('station_id', 'integer', (c) => c.notNull().references('ground_station.id').onDelete('cascade'))
    .addColumn('sheet_id', 'integer', (c) => c.references('spacecraft_sheet.id').onDelete('set null'))
    .addColumn('aos_at', 'timestamptz', (c) => c.notNull())
    .addColumn('tca_at', 'timestamptz', (c) => c.notNull())
    .addColumn('los_at', 'timestamptz', (c) => c.notNull())
    .addColumn('max_elevation_deg', 'double precision', (c) => c.notNull().check(sql`max_elevation_deg BETWEEN -90 AND 90`))
    .addColumn('aos_azimuth_deg', 'double precision', (c) => c.notNull().check(sql`aos_azimuth_deg >= 0 AND aos_azimuth_deg < 360`))
    .addColumn('los_azimuth_deg', 'double precision', (c) => c.notNull().check(sql`los_azimuth_deg >= 0 AND los_azimuth_deg < 360`))
    .addColumn('computed_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    .addUniqueConstraint('predicted_pass_aos_key', ['spacecraft_id', 'station_id', 'aos_at'])
    .addCheckConstraint('predicted_pass_order_check', sql`aos_at <= tca_at AND tca_at <= los_at`)
    .execute();
  await db.schema.createIndex('predicted_pass_aos_idx').on('predicted_pass').column('aos_at').execute();
  await db.schema.createIndex('predicted_pass_sc_los_idx').on('predicted_pass').columns(['spacecraft_id', 'los_at']).execute();

  await db.schema
    .createTable('pass_horizon')
    .addColumn('spacecraft_id', 'integer', (c) => c.primaryKey().references('spacecraft.id').onDelete('cascade'))
    .addColumn('computed_at', 'timestamptz', (c) => c.notNull())
    .addColumn('horizon_to', 'timestamptz', (c) => c.notNull())
    // A digest of the stations and sheets the stored passes were computed from.
    .addColumn('inputs', 'text', (c) => c.notNull())
    .execute();
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('pass_horizon').execute();
  await db.schema.dropTable('predicted_pass').execute();
}
