import { z } from 'zod';
import { quantityInfo } from './quantities';

const level = z.number({ invalid_type_error: 'must be a number' }).finite().nullable();

/** One limit of a set; the ordering rules are checked field by field so each error lands on its field. */
export const limitRuleInputSchema = z
  .object({
    quantity: z.string().min(1, 'Choose a quantity.'),
    loopId: z.number().int().min(0).max(3).nullable(),
    cautionHigh: level,
    warningHigh: level,
    cautionLow: level,
    warningLow: level,
    clearHigh: level,
    clearLow: level,
    persistence: z.number({ invalid_type_error: 'must be a number' }).int('must be a whole number').min(1, 'must be at least 1').max(1000, 'at most 1000'),
    rationale: z.string().max(500, 'at most 500 characters').default(''),
  })
  .superRefine((r, ctx) => {
    const issue = (path: string, message: string) => ctx.addIssue({ code: z.ZodIssueCode.custom, path: [path], message });
    const info = quantityInfo(r.quantity);
    if (!info) issue('quantity', `unknown quantity "${r.quantity}"`);
    else if (info.scope === 'body' && r.loopId !== null) issue('loopId', `${info.label} belongs to the whole spacecraft, not to a loop`);
    if ([r.cautionHigh, r.warningHigh, r.cautionLow, r.warningLow].every((x) => x === null)) issue('cautionHigh', 'set at least one caution or warning level');
    if (r.cautionHigh !== null && r.warningHigh !== null && !(r.cautionHigh < r.warningHigh)) issue('cautionHigh', 'the high caution level must lie inside (below) the high warning level');
    if (r.cautionLow !== null && r.warningLow !== null && !(r.cautionLow > r.warningLow)) issue('cautionLow', 'the low caution level must lie inside (above) the low warning level');
    const hi = r.cautionHigh ?? r.warningHigh;
    const lo = r.cautionLow ?? r.warningLow;
    if (hi !== null && lo !== null && !(lo < hi)) issue('cautionLow', 'low levels must lie below high levels');
    if (r.clearHigh !== null) {
      if (hi === null) issue('clearHigh', 'a high clear level needs a high caution or warning level');
      else if (!(r.clearHigh <= hi)) issue('clearHigh', 'the clear level must lie inside (at or below) the high caution level');
      if (lo !== null && !(r.clearHigh > lo)) issue('clearHigh', 'the high clear level must lie above the low levels');
    }
    if (r.clearLow !== null) {
      if (lo === null) issue('clearLow', 'a low clear level needs a low caution or warning level');
      else if (!(r.clearLow >= lo)) issue('clearLow', 'the clear level must lie inside (at or above) the low caution level');
      if (hi !== null && !(r.clearLow < hi)) issue('clearLow', 'the low clear level must lie below the high levels');
    }
  });

export type LimitRuleInput = z.infer<typeof limitRuleInputSchema>;

export const limitSetInputSchema = z.object({
  name: z.string().trim().min(1, 'Name the limit set.').max(120),
  notes: z.string().max(2000).default(''),
  rules: z.array(limitRuleInputSchema).max(100, 'at most 100 limits in a set'),
});
export type LimitSetInput = z.infer<typeof limitSetInputSchema>;

/** Check that every loop a limit names exists on the spacecraft; returns field errors keyed by path. */
export function loopProblems(input: LimitSetInput, loopIds: readonly number[]): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  input.rules.forEach((r, i) => {
    if (r.loopId !== null && !loopIds.includes(r.loopId)) out[`rules[${i}].loopId`] = [`this spacecraft has no loop ${r.loopId} (it has ${loopIds.join(', ')})`];
  });
  return out;
}
