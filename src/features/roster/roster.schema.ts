import { z } from 'zod';

const LOCAL = /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})(?::(\d{2})(?:\.\d{1,3})?)?$/;
const ZONED = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(?::\d{2}(?:\.\d{1,9})?)?(?:Z|[+-]\d{2}:\d{2})$/;

/** Longest shift the roster takes. */
export const MAX_SHIFT_DAYS = 31;

/**
 * A date and time as the form takes it ("2026-12-01 08:00" or "2026-12-01T08:00", read as UTC,
 * the product's one time zone) or as ISO 8601 with a zone; null when it is neither.
 */
export function parseUtcDateTime(s: string): Date | null {
  const t = s.trim();
  const m = LOCAL.exec(t);
  if (m) {
    const [y, mo, d, h, mi, se] = m.slice(1).map((x) => (x === undefined ? 0 : Number(x))) as number[];
    const date = new Date(Date.UTC(y!, mo! - 1, d!, h!, mi!, se!));
    // Reject rollovers such as 2026-02-30.
    return date.getUTCMonth() === mo! - 1 && date.getUTCDate() === d! && h! < 24 && mi! < 60 ? date : null;
  }
  if (ZONED.test(t)) {
    const date = new Date(t);
    return Number.isNaN(date.getTime()) ? null : date;
  }
  return null;
}

const when = z
  .string({ required_error: 'Required.' })
  .trim()
  .min(1, 'Required.')
  .refine((s) => parseUtcDateTime(s) !== null, 'Give a date and time (UTC) as YYYY-MM-DD HH:MM, e.g. 2026-12-01 08:00.');

/** A new on-call shift: who, from, to (UTC). Shared by the roster form and POST /api/roster/[key]. */
export const createOnCallShiftInputSchema = z
  .object({
    userId: z.string({ required_error: 'Choose who is on call.' }).trim().min(1, 'Choose who is on call.'),
    startsAt: when,
    endsAt: when,
  })
  .superRefine((v, ctx) => {
    const from = parseUtcDateTime(v.startsAt);
    const to = parseUtcDateTime(v.endsAt);
    if (!from || !to) return;
    if (to <= from) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['endsAt'], message: '"To" must be after "From".' });
    else if (to.getTime() - from.getTime() > MAX_SHIFT_DAYS * 86_400_000) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['endsAt'], message: `A shift is at most ${MAX_SHIFT_DAYS} days.` });
    }
  });

export type CreateOnCallShiftInput = z.infer<typeof createOnCallShiftInputSchema>;
