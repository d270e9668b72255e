import pg from 'pg';
import { Kysely, PostgresDialect } from 'kysely';
import type { Database } from './schema';
import { config } from '../config';

// int8 (counts, bigserial ids) → number: every value Millrace stores fits in 2^53.
pg.types.setTypeParser(20, (v) => Number(v));
// float4 → the exact binary32 value (PostgreSQL prints the shortest text that reads back as it).
pg.types.setTypeParser(700, (v) => Math.fround(Number(v)));
// numeric → number
pg.types.setTypeParser(1700, (v) => Number(v));

/** Create a pool; it survives a PostgreSQL restart instead of taking the process down. */
export function createPool(connectionString: string, max = 10): pg.Pool {
  const pool = new pg.Pool({ connectionString, max });
  pool.on('error', (err) => console.error('[db] idle client error:', err.message));
  return pool;
}

/** Create a Kysely handle on a pool. */
export function createDb(pool: pg.Pool): Kysely<Database> {
  return new Kysely<Database>({ dialect: new PostgresDialect({ pool }) });
}

/** The one pool of this process. */
export const pool = createPool(config().DATABASE_URL);
/** The one Kysely handle of this process. */
export const db = createDb(pool);
