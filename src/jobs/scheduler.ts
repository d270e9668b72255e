// The scheduler process of `npm start`: every minute, refresh stale pass predictions, analyse what
// arrived and evaluate limits; every day, create the telemetry partitions ahead. Several instances may run: the advisory lock
// per spacecraft and job makes sure each piece of work is done once.
import cron from 'node-cron';
import { db, pool } from '../lib/server/db';
import { runDueJobs } from '../lib/server/analysis-job';
import { ensurePartitionsAhead } from '../lib/server/telemetry-store';
import { refreshPassesIfStale } from '../lib/server/passes';
import { tripMailHandler } from '../lib/server/trip-mail';
import { createMailTransport, startMailWorker } from '../lib/server/mail';

let running = false;
async function tick(): Promise<void> {
  if (running) return; // the previous minute's run is still going
  running = true;
  try {
    // the data-age limit watches predicted passes: keep their horizon filled even when nobody opens Passes
    const refreshed = await refreshPassesIfStale(db);
    if (refreshed.length) console.log(`[scheduler] passes recomputed for ${refreshed.length} spacecraft`);
    const summaries = await runDueJobs(db, pool, { onTripChange: tripMailHandler });
    const busy = summaries.filter((s) => s.status !== 'done');
    const trips = summaries.reduce((n, s) => n + s.trips.opened + s.trips.escalated + s.trips.cleared, 0);
    console.log(`[scheduler] analysed ${summaries.reduce((n, s) => n + s.windows, 0)} windows for ${summaries.length} spacecraft; ${trips} trip changes${busy.length ? `; ${busy.map((s) => `${s.spacecraftKey} ${s.status}`).join(', ')}` : ''}`);
  } catch (err) {
    console.error('[scheduler] run failed:', err);
  } finally {
    running = false;
  }
}

await ensurePartitionsAhead(pool, new Date());
const every = cron.schedule('* * * * *', tick, { noOverlap: true });
const daily = cron.schedule('17 0 * * *', () => ensurePartitionsAhead(pool, new Date()).catch((e) => console.error('[scheduler] partitions:', e)));
// The outbox worker sends queued mail (with retry and backoff) and the caution digests.
const mail = startMailWorker(db, createMailTransport());
console.log('[scheduler] running: analysis every minute, mail every few seconds');
void tick();

async function stop(): Promise<void> {
  await every.stop();
  await mail.stop();
  await daily.stop();
  await db.destroy();
  process.exit(0);
}
process.on('SIGINT', stop);
process.on('SIGTERM', stop);
