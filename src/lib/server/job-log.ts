import type pg from 'pg';
import type { Kysely } from 'kysely';
import type { Database } from './db/schema';
import { runDueJobs, type JobSummary, type TripChangeHandler } from './analysis-job';
import { refreshPassesIfStale } from './passes';
import { runMailRound } from './mail/worker';
import type { MailTransport } from './mail/outbox';

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

/** Job-log rows are kept this long (the scheduler prunes older ones once a day). */
export const JOB_RUN_RETENTION_DAYS = 30;

/** Delete job-log rows that started more than `days` days before `now`; returns how many went. */
export async function pruneJobRuns(db: Kysely<Database>, now: Date, days = JOB_RUN_RETENTION_DAYS): Promise<number> {
  if (!(Number.isFinite(days) && days > 0)) throw new Error(`pruneJobRuns: days must be a positive number (got ${days})`);
  const r = await db.deleteFrom('job_run').where('started_at', '<', new Date(now.getTime() - days * 86_400_000)).executeTakeFirst();
  return Number(r.numDeletedRows);
}

/** What the pass refresh did: the spacecraft whose predictions were stale and recomputed. */
export interface PassPart {
  status: 'done' | 'failed';
  recomputed: { spacecraftId: number; upcoming: number; history: number; removed: number }[];
  error?: string;
}

/** What the mail round did: digests queued, messages sent, put off for a retry, given up. */
export interface MailPart {
  status: 'done' | 'failed';
  digests: number;
  sent: number;
  retried: number;
  failed: number;
  error?: string;
}

/** The summary of one "run all due work": each part, in the order they ran. */
export interface DueWorkSummary {
  passes: PassPart;
  /** One entry per spacecraft (each recorded in job_run as 'analysis'). */
  jobs: JobSummary[];
  /** Absent when the caller left the mail round out (the scheduler, whose mail worker runs it). */
  mail?: MailPart;
  /** Set when the analysis as a whole could not start (say, the fleet could not be read). */
  analysisError?: string;
}

const message = (err: unknown) => (err instanceof Error ? err.message : String(err));

/** Run `work` as one job_run row named `job` (no spacecraft), recording its detail or its error. */
async function recorded<T extends { status: string; error?: string }>(db: Kysely<Database>, job: string, work: () => Promise<Omit<T, 'status' | 'error'>>, failed: Omit<T, 'status' | 'error'>): Promise<T> {
  const run = await db.insertInto('job_run').values({ job, spacecraft_id: null, started_at: new Date() }).returning('id').executeTakeFirstOrThrow();
  let out: T;
  try {
    out = { status: 'done', ...(await work()) } as T;
  } catch (err) {
    console.error(`[jobs] ${job} failed:`, err);
    out = { status: 'failed', ...failed, error: message(err) } as T;
  }
  const { error, ...detail } = out;
  await db
    .updateTable('job_run')
    .set({ finished_at: new Date(), detail: JSON.stringify(detail), error: error ?? null })
    .where('id', '=', run.id)
    .execute();
  return out;
}

/**
 * Run all due work once, as "Run due work now", `npm run jobs -- --once` and the scheduler do:
 * refresh stale pass predictions (the data-age limit watches passes), analyse every spacecraft and
 * evaluate its limits (runDueJobs; one spacecraft failing does not stop the others), then one mail
 * round (queue ended digests, send what is due) so that the trips just raised are mailed. Each part
 * is recorded in job_run ('passes', 'analysis' per spacecraft, 'mail'); a part that fails is
 * reported and the next part still runs.
 */
export async function runAllDueWork(
  db: Kysely<Database>,
  pool: pg.Pool,
  opts: {
    now?: Date;
    onTripChange?: TripChangeHandler;
    /** The relay to send through; null leaves the mail round out. */
    transport: MailTransport | null;
  },
): Promise<DueWorkSummary> {
  const now = opts.now ?? new Date();
  const passes = await recorded<PassPart>(db, 'passes', async () => ({ recomputed: await refreshPassesIfStale(db, now) }), { recomputed: [] });
  let jobs: JobSummary[] = [];
  let analysisError: string | undefined;
  try {
    jobs = await runDueJobs(db, pool, { nowMs: now.getTime(), ...(opts.onTripChange ? { onTripChange: opts.onTripChange } : {}) });
  } catch (err) {
    console.error('[jobs] analysis failed:', err);
    analysisError = message(err);
  }
  const summary: DueWorkSummary = { passes, jobs, ...(analysisError ? { analysisError } : {}) };
  if (opts.transport) {
    const transport = opts.transport;
    summary.mail = await recorded<MailPart>(db, 'mail', () => runMailRound(db, transport, now), { digests: 0, sent: 0, retried: 0, failed: 0 });
  }
  return summary;
}

/** One line per part, for the command line and the scheduler's log. */
export function summaryLines(s: DueWorkSummary): string[] {
  const lines = [`passes: ${s.passes.status}, recomputed for ${s.passes.recomputed.length} spacecraft${s.passes.error ? ` — ${s.passes.error}` : ''}`];
  if (s.analysisError) lines.push(`analysis: failed — ${s.analysisError}`);
  for (const j of s.jobs) {
    lines.push(`analysis ${j.spacecraftKey}: ${j.status}, ${j.batches} new batches, ${j.windows} windows, ${j.rowsWritten} rows, trips +${j.trips.opened} ↑${j.trips.escalated} ✓${j.trips.cleared}${j.error ? ` — ${j.error}` : ''}`);
  }
  if (s.mail) lines.push(`mail: ${s.mail.status}, digests ${s.mail.digests}, sent ${s.mail.sent}, retry later ${s.mail.retried}, failed ${s.mail.failed}${s.mail.error ? ` — ${s.mail.error}` : ''}`);
  return lines;
}

/** Whether any part of the run failed. */
export function anyFailed(s: DueWorkSummary): boolean {
  return s.passes.status === 'failed' || !!s.analysisError || s.jobs.some((j) => j.status === 'failed') || s.mail?.status === 'failed';
}
