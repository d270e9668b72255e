import { createHash, randomBytes } from 'node:crypto';
import type { Kysely, Transaction } from 'kysely';
import type { Database } from './db/schema';
import { insertAuditEntry } from './audit';

type Db = Kysely<Database> | Transaction<Database>;

/** Tokens are stored as SHA-256 digests only; the clear token is shown once, at creation. */
export function hashIngestToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

/** Create an ingest token for a spacecraft; returns the clear token (never stored). */
export async function createIngestToken(db: Db, spacecraftId: number, label: string, actorId: string | null): Promise<{ id: number; token: string }> {
  const token = `mrt_${randomBytes(24).toString('base64url')}`;
  const row = await db
    .insertInto('ingest_token')
    .values({ spacecraft_id: spacecraftId, label, token_hash: hashIngestToken(token), token_hint: token.slice(-4), created_by: actorId })
    .returning('id')
    .executeTakeFirstOrThrow();
  await insertAuditEntry(db, { actorId, action: 'token.create', targetType: 'ingest_token', targetId: row.id, detail: { spacecraftId, label } });
  return { id: row.id, token };
}

/** The tokens of a spacecraft (no hashes), newest first. */
export function listIngestTokens(db: Db, spacecraftId: number) {
  return db
    .selectFrom('ingest_token as t')
    .leftJoin('app_user as u', 'u.id', 't.created_by')
    .select(['t.id', 't.label', 't.token_hint', 't.created_at', 't.last_used_at', 't.revoked_at', 'u.name as created_by_name'])
    .where('t.spacecraft_id', '=', spacecraftId)
    .orderBy('t.created_at', 'desc')
    .execute();
}

/** Revoke a token; false when the spacecraft has no such live token. */
export async function revokeIngestToken(db: Db, spacecraftId: number, tokenId: number, actorId: string | null): Promise<boolean> {
  const r = await db
    .updateTable('ingest_token')
    .set({ revoked_at: new Date() })
    .where('id', '=', tokenId)
    .where('spacecraft_id', '=', spacecraftId)
    .where('revoked_at', 'is', null)
    .executeTakeFirst();
  if (!r.numUpdatedRows) return false;
  await insertAuditEntry(db, { actorId, action: 'token.revoke', targetType: 'ingest_token', targetId: tokenId, detail: { spacecraftId } });
  return true;
}

/** The live token behind a bearer value, with its spacecraft. */
export function findLiveToken(db: Db, bearer: string) {
  return db
    .selectFrom('ingest_token')
    .select(['id', 'spacecraft_id'])
    .where('token_hash', '=', hashIngestToken(bearer))
    .where('revoked_at', 'is', null)
    .executeTakeFirst();
}
