import type { TripChangeHandler } from './analysis-job';
import { enqueueTripMail } from './mail';

/**
 * Hands each trip change to the mail outbox, in the job's transaction: a trip and its message are
 * stored together or not at all.
 */
export const tripMailHandler: TripChangeHandler = async (trx, change, ctx) => {
  const t = change.event.trip;
  const value = change.event.type === 'cleared' ? change.event.value : t.value;
  const spacecraft = await trx.selectFrom('trip').select('spacecraft_id').where('id', '=', change.tripId).executeTakeFirstOrThrow();
  await enqueueTripMail(
    trx,
    {
      tripId: change.tripId,
      event: change.event.type,
      kind: change.info.kind,
      level: t.level,
      spacecraftKey: ctx.spacecraftKey,
      spacecraftId: spacecraft.spacecraft_id,
      loopId: change.loopId,
      quantity: change.info.key,
      quantityLabel: change.info.label,
      unit: change.info.unit,
      value,
      limit: t.limit,
      limitSide: t.side,
      at: new Date(change.event.t),
      limitSetVersion: change.rule.limitSetVersion,
    },
    new Date(ctx.nowMs),
  );
};
