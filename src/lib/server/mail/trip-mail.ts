import { z } from 'zod';
import type { Kysely, Transaction } from 'kysely';
import type { Database } from '../db/schema';
import { config } from '../config';
import { enqueueMail } from './outbox';
import { recipientsFor } from './roster';
import { periodStartOf, renderDigest, renderTripMail, type DigestEntry, type TripMailFacts } from './templates';

export type { TripMailFacts } from './templates';

type Db = Kysely<Database> | Transaction<Database>;

/** The facts as stored in a digest item (JSON, times as ISO strings). */
export const tripMailFactsSchema = z.object({
  tripId: z.number().int(),
  event: z.enum(['opened', 'escalated', 'cleared']),
  kind: z.string(),
  level: z.enum(['caution', 'warning']),
  spacecraftKey: z.string(),
  spacecraftId: z.number().int(),
  loopId: z.number().int().nullable(),
  quantity: z.string(),
  quantityLabel: z.string(),
  unit: z.string(),
  value: z.number(),
  limit: z.number(),
  limitSide: z.enum(['high', 'low']),
  at: z.coerce.date(),
  limitSetVersion: z.number().int(),
});

/** Where a trip event's mail went. */
export type TripMailRoute =
  | { route: 'message'; outboxId: number | null; duplicate: boolean }
  | { route: 'digest'; itemId: number | null; duplicate: boolean }
  | { route: 'digest-cleared'; itemId: number };

/** The outbox key of a trip message, one per trip, event and level. */
export function tripMessageKey(f: Pick<TripMailFacts, 'tripId' | 'event' | 'level'>): string {
  return `trip:${f.tripId}:${f.event}:${f.level}`;
}

/**
 * Mail a trip event, in the caller's transaction. Warnings (opened or escalated) and clears are
 * queued as one message each at once, to whoever is on call at the trip's time. A caution
 * opening waits for its spacecraft's digest (the period holding `now`). A caution that clears
 * while its opening still waits for the digest is marked cleared in the digest instead of being
 * mailed on its own, so nobody hears of a clear before the trip itself.
 */
export async function enqueueTripMail(trx: Db, facts: TripMailFacts, now: Date, digestMinutes = config().DIGEST_MINUTES): Promise<TripMailRoute> {
  if (facts.event === 'opened' && facts.level === 'caution') {
    const to = await recipientsFor(trx, facts.spacecraftId, facts.at);
    const row = await trx
      .insertInto('mail_digest_item')
      .values({
        spacecraft_id: facts.spacecraftId,
        trip_id: facts.tripId,
        period_start: periodStartOf(now, digestMinutes),
        to_addresses: to,
        facts: JSON.stringify(facts),
      })
      .onConflict((oc) => oc.column('trip_id').doNothing())
      .returning('id')
      .executeTakeFirst();
    return { route: 'digest', itemId: row?.id ?? null, duplicate: !row };
  }
  if (facts.event === 'cleared' && facts.level === 'caution') {
    const folded = await trx
      .updateTable('mail_digest_item')
      .set({ cleared_at: facts.at })
      .where('trip_id', '=', facts.tripId)
      .where('digested_at', 'is', null)
      .returning('id')
      .executeTakeFirst();
    if (folded) return { route: 'digest-cleared', itemId: folded.id };
  }
  const to = await recipientsFor(trx, facts.spacecraftId, facts.at);
  const body = renderTripMail(facts, config().PUBLIC_URL);
  const id = await enqueueMail(trx, {
    messageKey: tripMessageKey(facts),
    kind: `trip.${facts.event}`,
    to,
    subject: body.subject,
    text: body.text,
    html: body.html,
    tripId: facts.tripId,
    notBefore: now,
  });
  return { route: 'message', outboxId: id, duplicate: id === null };
}

/**
 * Queue one digest per spacecraft, period and recipient set for every period that has ended by
 * `now`. Items are locked FOR UPDATE SKIP LOCKED and marked in the same transaction as the
 * digest's outbox row, so each caution trip is listed in exactly one digest. The first digest of
 * a spacecraft and period has the key digest:{spacecraftId}:{periodStart}; another one of the
 * same period (a second recipient set, or an item that committed late) adds its first item id.
 */
export async function flushDigests(db: Kysely<Database>, now: Date, digestMinutes = config().DIGEST_MINUTES): Promise<number> {
  const current = periodStartOf(now, digestMinutes);
  return db.transaction().execute(async (trx) => {
    const items = await trx
      .selectFrom('mail_digest_item')
      .select(['id', 'spacecraft_id', 'period_start', 'to_addresses', 'facts', 'cleared_at'])
      .where('digested_at', 'is', null)
      .where('period_start', '<', current)
      .orderBy('period_start')
      .orderBy('id')
      .forUpdate()
      .skipLocked()
      .execute();
    const groups = new Map<string, typeof items>();
    for (const it of items) {
      const key = `${it.spacecraft_id}|${it.period_start.toISOString()}|${[...it.to_addresses].sort().join(',')}`;
      groups.set(key, [...(groups.get(key) ?? []), it]);
    }
    let queued = 0;
    for (const group of groups.values()) {
      const first = group[0]!;
      const entries: DigestEntry[] = group.map((g) => ({ ...tripMailFactsSchema.parse(g.facts), clearedAt: g.cleared_at }));
      const periodStart = first.period_start;
      const body = renderDigest(
        { spacecraftKey: entries[0]!.spacecraftKey, periodStart, periodEnd: new Date(periodStart.getTime() + digestMinutes * 60_000), entries },
        config().PUBLIC_URL,
      );
      const baseKey = `digest:${first.spacecraft_id}:${periodStart.toISOString()}`;
      const mail = { kind: 'trip.digest', to: first.to_addresses, subject: body.subject, text: body.text, html: body.html, tripId: null, notBefore: now };
      const outboxId = (await enqueueMail(trx, { ...mail, messageKey: baseKey })) ?? (await enqueueMail(trx, { ...mail, messageKey: `${baseKey}:${first.id}` }));
      await trx
        .updateTable('mail_digest_item')
        .set({ digested_at: now, outbox_id: outboxId })
        .where(
          'id',
          'in',
          group.map((g) => g.id),
        )
        .execute();
      queued++;
    }
    return queued;
  });
}
