// Migrate the database named by DATABASE_URL to the latest version.
import { db } from '../src/lib/server/db';
import { migrateToLatest } from '../src/lib/server/db/migrate';

const result = await migrateToLatest(db);
const applied = result.results?.filter((r) => r.status === 'Success') ?? [];
console.log(applied.length ? `[migrate] applied ${applied.map((r) => r.migrationName).join(', ')}` : '[migrate] database is up to date');
await db.destroy();
