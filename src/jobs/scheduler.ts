// The scheduler process of `npm start`: every minute, refresh stale pass predictions, analyse what
// arrived and evaluate limits; every day, create the telemetry partitions ahead and prune the job log
// (runs older than JOB_RUN_RETENTION_DAYS, 30 days). The mail worker sends queued mail every few
// seconds. Several instances may run: the advisory lock per spacecraft and job, and the outbox's
// row locks, make sure each piece of work is done once.
import cron from 'node-cron';
import { db, pool } from '../lib/server/db';
import { ensurePartitionsAhead } from '../lib/server/telemetry-store';
import { anyFailed, pruneJobRuns, runAllDueWork, summaryLines, JOB_RUN_RETENTION_DAYS } from '../lib/server/job-log';
import { tripMailHandler } from '../lib/server/trip-mail';
import { createMailTransport, startMailWorker } from '../lib/server/mail';

let running = false;
async function tick(): Promise<void> {
  if (running) return; // the previous minute's run is still going
  running = true;
  try {
    // The mail worker below sends every few seconds, so the minute's run leaves the mail round out.
    const s = await runAllDueWork(db, pool, { onTripChange: tripMailHandler, transport: null });
    const trips = s.jobs.reduce((n, j) => n + j.trips.opened + j.trips.escalated + j.trips.cleared, 0);
    const busy = s.jobs.filter((j) => j.status !== 'done');
    console.log(
      `[scheduler] passes recomputed for ${s.passes.recomputed.length} spacecraft; analysed ${s.jobs.reduce((n, j) => n + j.windows, 0)} windows for ${s.jobs.length} spacecraft; ${trips} trip changes${busy.length ? `; ${busy.map((j) => `${j.spacecraftKey} ${j.status}`).join(', ')}` : ''}`,
    );
    if (anyFailed(s)) for (const line of summaryLines(s)) if (/failed/.test(line)) console.error(`[scheduler] ${line}`);
  } catch (err) {
    console.error('[scheduler] run failed:', err);
  } finally {
    running = false;
  }
}

async function daily(): Promise<void> {
  try {
    await ensurePartitionsAhead(pool, new Date());
  } catch (err) {
    console.error('[scheduler] partitions:', err);
  }
  try {
    const n = await pruneJobRuns(db, new Date());
    if (n) console.log(`[scheduler] job log: ${n} runs older than ${JOB_RUN_RETENTION_DAYS} days removed`);
  } catch (err) {
    console.error('[scheduler] job log prune:', err);
  }
}

await daily();
const every = cron.schedule('* * * * *', tick, { noOverlap: true });
const nightly = cron.schedule('17 0 * * *', daily);
// The outbox worker sends queued mail (with retry and backoff) and the caution digests.
const mail = startMailWorker(db, createMailTransport());
console.log('[scheduler] running: passes and analysis every minute, mail every few seconds, job log kept 30 days');
void tick();

async function stop(): Promise<void> {
  await every.stop();
  await mail.stop();
  await nightly.stop();
  await db.destroy();
  process.exit(0);
}
process.on('SIGINT', stop);
process.on('SIGTERM', stop);
