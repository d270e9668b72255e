import { sql, type Kysely } from 'kysely';
import type { Database } from '../db/schema';
import { HttpError } from '../http';
import { verifyPassword } from './password';
import { findUserByEmail } from '../users';

/** Failed attempts allowed per window before sign-in is refused with 429. */
export const SIGN_IN_LIMITS = {
  windowMinutes: 15,
  perAccount: 5,
  perAddress: 30,
} as const;

// A fixed hash to verify against when the account is unknown, so timing does not reveal it.
const DUMMY_HASH = '$argon2id$v=19$m=19456,t=2,p=1$c29tZXNhbHRzb21lc2FsdA$ZmFrZWhhc2hmYWtlaGFzaGZha2VoYXNoZmFrZWg';

function windowStart(now: Date): Date {
  const ms = SIGN_IN_LIMITS.windowMinutes * 60_000;
  return new Date(Math.floor(now.getTime() / ms) * ms);
}

async function failuresIn(db: Kysely<Database>, scope: 'account' | 'address', key: string, now: Date): Promise<number> {
  const row = await db
    .selectFrom('sign_in_attempt')
    .select('failures')
    .where('scope', '=', scope)
    .where('key', '=', key)
    .where('window_start', '=', windowStart(now))
    .executeTakeFirst();
  return row?.failures ?? 0;
}

async function recordFailure(db: Kysely<Database>, scope: 'account' | 'address', key: string, now: Date): Promise<void> {
  await db
    .insertInto('sign_in_attempt')
    .values({ scope, key, window_start: windowStart(now), failures: 1 })
    .onConflict((oc) => oc.columns(['scope', 'key', 'window_start']).doUpdateSet({ failures: sql`sign_in_attempt.failures + 1` }))
    .execute();
}

/**
 * Check credentials under the rate limits; returns the user id or throws 401/429.
 * The message never says whether the address exists.
 */
export async function checkCredentials(
  db: Kysely<Database>,
  input: { email: string; password: string; address: string },
  now = new Date(),
): Promise<string> {
  const account = input.email.trim().toLowerCase();
  const [byAccount, byAddress] = await Promise.all([
    failuresIn(db, 'account', account, now),
    failuresIn(db, 'address', input.address, now),
  ]);
  if (byAccount >= SIGN_IN_LIMITS.perAccount || byAddress >= SIGN_IN_LIMITS.perAddress) {
    const retry = Math.ceil((windowStart(now).getTime() + SIGN_IN_LIMITS.windowMinutes * 60_000 - now.getTime()) / 1000);
    throw new HttpError('TOO_MANY_REQUESTS', `Too many failed sign-ins. Wait ${Math.ceil(retry / 60)} min and try again.`, undefined, {
      'retry-after': String(retry),
    });
  }
  const user = await findUserByEmail(db, account);
  const ok = await verifyPassword(user?.password_hash ?? DUMMY_HASH, input.password);
  if (!user || !ok || !user.password_hash || user.disabled_at) {
    await Promise.all([recordFailure(db, 'account', account, now), recordFailure(db, 'address', input.address, now)]);
    throw new HttpError('UNAUTHORIZED', user?.disabled_at && ok ? 'This account is disabled. Ask an admin.' : 'E-mail or password is wrong.');
  }
  await db.deleteFrom('sign_in_attempt').where('scope', '=', 'account').where('key', '=', account).execute();
  return user.id;
}
