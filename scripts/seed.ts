// Seed the invented demo fleet. `--if-empty`: only when there are no users yet. `--reset`: wipe first.
import { db } from '../src/lib/server/db';
import { seedDemo, truncateAll } from '../src/lib/server/seed';

const args = new Set(process.argv.slice(2));
const password = process.env.DEMO_PASSWORD ?? 'millrace-demo';
if (args.has('--reset')) await truncateAll(db);
const users = await db.selectFrom('app_user').select(db.fn.countAll<number>().as('n')).executeTakeFirstOrThrow();
if (args.has('--if-empty') && users.n > 0) {
  console.log('[seed] database already holds data; demo seed left as it is');
} else {
  const r = await seedDemo(db, password);
  console.log(`[seed] added ${r.users} users, ${r.spacecraft} spacecraft, ${r.stations} ground stations`);
}
await db.destroy();
