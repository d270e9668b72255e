// Run all due work now and print a summary: `npm run jobs -- --once`.
import { db, pool } from '../lib/server/db';
import { runDueJobs } from '../lib/server/analysis-job';
import { tripMailHandler } from '../lib/server/trip-mail';

const args = new Set(process.argv.slice(2));
if (!args.has('--once')) {
  console.error('usage: npm run jobs -- --once   (the scheduler of `npm start` runs them every minute)');
  process.exit(2);
}
const summaries = await runDueJobs(db, pool, { onTripChange: tripMailHandler });
for (const s of summaries) {
  console.log(
    `[jobs] ${s.spacecraftKey}: ${s.status}, ${s.batches} new batches, ${s.windows} windows, ${s.rowsWritten} rows, trips +${s.trips.opened} ↑${s.trips.escalated} ✓${s.trips.cleared}${s.error ? ` — ${s.error}` : ''}`,
  );
}
await db.destroy();
process.exit(summaries.some((s) => s.status === 'failed') ? 1 : 0);
