import type { Kysely } from 'kysely';
import type { Database } from './db/schema';

/** The latest job runs, newest first. */
export function listJobRuns(db: Kysely<Database>, limit = 200) {
  return db
    .selectFrom('job_run as j')
    .leftJoin('spacecraft as s', 's.id', 'j.spacecraft_id')
    .select(['j.id', 'j.job', 's.key as spacecraft', 'j.started_at', 'j.finished_at', 'j.windows', 'j.rows_written', 'j.detail', 'j.error'])
    .orderBy('j.id', 'desc')
    .limit(limit)
    .execute();
}
