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

type Scope = 'account' | 'address';

/**
 * Count this attempt against both keys before the password is looked at, in one statement, and
 * return the counts including it. Counting first is what makes the limit hold under parallel
 * requests: each attempt takes a slot atomically, so no more than the limit can ever see a count
 * under it, however many arrive at once.
 */
async function takeAttempt(db: Kysely<Database>, account: string, address: string, now: Date): Promise<Record<Scope, number>> {
  const window_start = windowStart(now);
  const rows = await db
    .insertInto('sign_in_attempt')
    .values([
      { scope: 'account', key: account, window_start, failures: 1 },
      { scope: 'address', key: address, window_start, failures: 1 },
    ])
    .onConflict((oc) => oc.columns(['scope', 'key', 'window_start']).doUpdateSet({ failures: sql`sign_in_attempt.failures + 1` }))
    .returning(['scope', 'failures'])
    .execute();
  const out: Record<Scope, number> = { account: 0, address: 0 };
  for (const r of rows) out[r.scope as Scope] = r.failures;
  return out;
}

/** Give back the slot an attempt took (refused before checking, or it succeeded). */
async function returnAttempt(db: Kysely<Database>, scope: Scope, key: string, now: Date): Promise<void> {
  await db
    .updateTable('sign_in_attempt')
    .set({ failures: sql`greatest(sign_in_attempt.failures - 1, 0)` })
    .where('scope', '=', scope)
    .where('key', '=', key)
    .where('window_start', '=', windowStart(now))
    .execute();
}

/**
 * Check credentials under the rate limits; returns the user id or throws 401/429.
 * The message never says whether the address exists.
 *
 * The counters hold the failed attempts of the window plus those still being checked. An attempt
 * that is refused for the limit, or that succeeds, gives its slot back; a failed one keeps it; a
 * success also clears the account's counter.
 */
export async function checkCredentials(
  db: Kysely<Database>,
  input: { email: string; password: string; address: string },
  now = new Date(),
): Promise<string> {
  const account = input.email.trim().toLowerCase();
  const taken = await takeAttempt(db, account, input.address, now);
  if (taken.account > SIGN_IN_LIMITS.perAccount || taken.address > SIGN_IN_LIMITS.perAddress) {
    await Promise.all([returnAttempt(db, 'account', account, now), returnAttempt(db, 'address', input.address, now)]);
    const retry = Math.ceil((windowStart(now).getTime() + SIGN_IN_LIMITS.windowMinutes * 60_000 - now.getTime()) / 1000);
    throw new HttpError('TOO_MANY_REQUESTS', `Too many failed sign-ins. Wait ${Math.ceil(retry / 60)} min and try again.`, undefined, {
      'retry-after': String(retry),
    });
  }
  const user = await findUserByEmail(db, account);
  const ok = await verifyPassword(user?.password_hash ?? DUMMY_HASH, input.password);
  if (!user || !ok || !user.password_hash || user.disabled_at) {
    throw new HttpError('UNAUTHORIZED', user?.disabled_at && ok ? 'This account is disabled. Ask an admin.' : 'E-mail or password is wrong.');
  }
  await Promise.all([
    db.deleteFrom('sign_in_attempt').where('scope', '=', 'account').where('key', '=', account).execute(),
    returnAttempt(db, 'address', input.address, now),
  ]);
  return user.id;
}
