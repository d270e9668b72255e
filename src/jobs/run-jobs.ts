// Run all due work now and print a summary: `npm run jobs -- --once`. The same as "Run due work
// now" on the Job log: pass refresh, analysis and limits of every spacecraft, one mail round.
import { db, pool } from '../lib/server/db';
import { anyFailed, runAllDueWork, summaryLines } from '../lib/server/job-log';
import { tripMailHandler } from '../lib/server/trip-mail';
import { createMailTransport } from '../lib/server/mail';

const args = new Set(process.argv.slice(2));
if (!args.has('--once')) {
  console.error('usage: npm run jobs -- --once   (the scheduler of `npm start` runs them every minute)');
  process.exit(2);
}
const transport = createMailTransport();
const summary = await runAllDueWork(db, pool, { onTripChange: tripMailHandler, transport });
transport.close();
for (const line of summaryLines(summary)) console.log(`[jobs] ${line}`);
await db.destroy();
process.exit(anyFailed(summary) ? 1 : 0);
