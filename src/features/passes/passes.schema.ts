import { z } from 'zod';
import { stationKeySchema } from '../stations/stations.schema';

/** The widest window one pass list covers. */
export const MAX_PASS_WINDOW_DAYS = 8;
/** Default window: the last day and the next three. */
export const DEFAULT_PAST_MS = 86_400_000;
export const DEFAULT_AHEAD_MS = 3 * 86_400_000;

const blankToUndefined = (v: unknown) => (v === '' || v === null ? undefined : v);
const instant = z.preprocess(
  blankToUndefined,
  z.string().datetime({ offset: true, message: 'Give an ISO 8601 time with a zone, e.g. 2026-12-01T00:00:00Z.' }).optional(),
);

/** GET /api/passes and the Passes page: ?spacecraft=&station=&from=&to= (from/to ISO 8601). */
export const passQuerySchema = z
  .object({
    spacecraft: z.preprocess(blankToUndefined, z.string().regex(/^[A-Z0-9-]{2,32}$/, 'A spacecraft key is 2–32 characters of A–Z, 0–9 and -.').optional()),
    station: z.preprocess(blankToUndefined, stationKeySchema.optional()),
    from: instant,
    to: instant,
  })
  .superRefine((q, ctx) => {
    if (!q.from || !q.to) return;
    const span = Date.parse(q.to) - Date.parse(q.from);
    if (span <= 0) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['to'], message: '"to" must be after "from".' });
    else if (span > MAX_PASS_WINDOW_DAYS * 86_400_000) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['to'], message: `A window is at most ${MAX_PASS_WINDOW_DAYS} days.` });
  });
export type PassQuery = z.infer<typeof passQuerySchema>;

/** The window a query asks for, with the defaults around `now` (to follows from, from precedes to, when only one is given). */
export function passWindow(q: PassQuery, now: Date): { from: Date; to: Date } {
  const fromMs = q.from ? Date.parse(q.from) : q.to ? Date.parse(q.to) - DEFAULT_PAST_MS - DEFAULT_AHEAD_MS : now.getTime() - DEFAULT_PAST_MS;
  const toMs = q.to ? Date.parse(q.to) : q.from ? fromMs + DEFAULT_PAST_MS + DEFAULT_AHEAD_MS : now.getTime() + DEFAULT_AHEAD_MS;
  return { from: new Date(fromMs), to: new Date(toMs) };
}
