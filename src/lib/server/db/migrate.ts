import fs from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { Migrator, type Kysely, type Migration, type MigrationProvider, type MigrationResultSet } from 'kysely';
import type { Database } from './schema';

/** Loads migrations/*.ts by file URL (works under tsx and vitest alike). */
class FolderMigrationProvider implements MigrationProvider {
  constructor(private readonly folder: string) {}
  async getMigrations(): Promise<Record<string, Migration>> {
    const out: Record<string, Migration> = {};
    for (const file of (await fs.readdir(this.folder)).sort()) {
      if (!/^\d{4}_\d{2}_\d{2}_\d{6}_[a-z0-9_]+\.ts$/.test(file)) continue;
      out[file.replace(/\.ts$/, '')] = (await import(/* @vite-ignore */ pathToFileURL(path.join(this.folder, file)).href)) as Migration;
    }
    return out;
  }
}

/** A migrator over the repository's migrations folder. */
export function migrator(db: Kysely<Database>, folder = path.resolve(process.cwd(), 'migrations')): Migrator {
  return new Migrator({ db, provider: new FolderMigrationProvider(folder) });
}

/** Migrate to the latest version; throws with the failing migration named. */
export async function migrateToLatest(db: Kysely<Database>): Promise<MigrationResultSet> {
  const result = await migrator(db).migrateToLatest();
  if (result.error) {
    const failed = result.results?.find((r) => r.status === 'Error');
    throw new Error(`migration ${failed?.migrationName ?? '?'} failed: ${String(result.error)}`);
  }
  return result;
}
