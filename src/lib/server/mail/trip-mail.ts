import { z } from 'zod';
import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from '../db/schema';
import { config } from '../config';
import { quantityInfo } from '../../limits/quantities';
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
  closedNote: z.string().nullish(),
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
 * queued as one message each at once, to whoever is on call when the message is queued (`now`):
 * for playback of an old excursion, the people on shift now, not those on shift when the data was
 * taken (they may long have gone off duty). A caution
 * opening waits for its spacecraft's digest (the period holding `now`). A caution that clears
 * while its opening still waits for the digest is marked cleared in the digest instead of being
 * mailed on its own, so nobody hears of a clear before the trip itself.
 */
export async function enqueueTripMail(trx: Db, facts: TripMailFacts, now: Date, digestMinutes = config().DIGEST_MINUTES): Promise<TripMailRoute> {
  if (facts.event === 'opened' && facts.level === 'caution') {
    const to = await recipientsFor(trx, facts.spacecraftId, now);
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
      .set(facts.closedNote ? { cleared_at: facts.at, facts: sql<string>`jsonb_set(facts, '{closedNote}', to_jsonb(${facts.closedNote}::text))` } : { cleared_at: facts.at })
      .where('trip_id', '=', facts.tripId)
      .where('digested_at', 'is', null)
      .returning('id')
      .executeTakeFirst();
    if (folded) return { route: 'digest-cleared', itemId: folded.id };
    // Already folded into a digest that went out (a repeated clear): that digest told it.
    const told = await trx.selectFrom('mail_digest_item').select('id').where('trip_id', '=', facts.tripId).where('cleared_at', 'is not', null).executeTakeFirst();
    if (told) return { route: 'digest-cleared', itemId: told.id };
  }
  const to = await recipientsFor(trx, facts.spacecraftId, now);
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

/**
 * Mail the trips a limit-set handover closed (their rule is no longer evaluated, so they cannot
 * clear on their own), in the approval's transaction: one "closed at the handover" message per
 * trip, or, for a caution still waiting for its digest, the digest line marked so. Call it with the
 * ids handOverLimits returns in `closed`; trips without a cleared_note (not closed by a handover)
 * are left alone. Returns where each trip's mail went.
 */
export async function mailTripsClosedAtHandover(trx: Db, tripIds: readonly number[], now: Date): Promise<TripMailRoute[]> {
  if (!tripIds.length) return [];
  const trips = await trx
    .selectFrom('trip as t')
    .innerJoin('spacecraft as s', 's.id', 't.spacecraft_id')
    .select(['t.id', 't.spacecraft_id', 's.key', 't.loop_id', 't.kind', 't.quantity', 't.level', 't.side', 't.last_value', 't.limit_value', 't.limit_set_version', 't.cleared_at', 't.cleared_note'])
    .where('t.id', 'in', [...tripIds])
    .where('t.cleared_at', 'is not', null)
    .where('t.cleared_note', 'is not', null)
    .orderBy('t.id')
    .execute();
  const out: TripMailRoute[] = [];
  for (const t of trips) {
    const info = quantityInfo(t.quantity);
    out.push(
      await enqueueTripMail(
        trx,
        {
          tripId: t.id,
          event: 'cleared',
          kind: t.kind,
          level: t.level,
          spacecraftKey: t.key,
          spacecraftId: t.spacecraft_id,
          loopId: t.loop_id,
          quantity: t.quantity,
          quantityLabel: info?.label ?? t.quantity,
          unit: info?.unit ?? '',
          value: t.last_value,
          limit: t.limit_value,
          limitSide: t.side,
          at: t.cleared_at!,
          limitSetVersion: t.limit_set_version,
          closedNote: t.cleared_note,
        },
        now,
      ),
    );
  }
  return out;
}
