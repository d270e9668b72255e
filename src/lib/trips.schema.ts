import { z } from 'zod';
import { TRIP_KINDS } from './limits/quantities';
import { parseUtcDateTime } from '../features/roster/roster.schema';

export const TRIP_STATES = ['open', 'acknowledged', 'resolved'] as const;

const blankToUndefined = (v: unknown) => (typeof v === 'string' && v.trim() === '' ? undefined : v);

/** A time filter: "2026-12-01 08:00" (read as UTC) or ISO 8601 with a zone; kept as an ISO instant. */
const instant = (name: string) =>
  z.preprocess(
    blankToUndefined,
    z
      .string()
      .trim()
      .refine((s) => parseUtcDateTime(s) !== null, `${name} must be a UTC date and time, e.g. 2026-12-01 08:00 or 2026-12-01T08:00:00Z`)
      .transform((s) => parseUtcDateTime(s)!.toISOString())
      .optional(),
  );

export const TRIP_SORTS = ['onset_at', 'raised_at', 'level', 'state', 'kind', 'spacecraft'] as const;
/** The trip list's loop filter: a loop id, or "none" for trips of the whole spacecraft. */
export type TripLoopFilter = number | 'none';

/** A parsed trip query (from and to as ISO instants). */
export interface TripQuery {
  spacecraft?: string;
  state?: (typeof TRIP_STATES)[number];
  kind?: string;
  loop?: TripLoopFilter;
  from?: string;
  to?: string;
  sort: (typeof TRIP_SORTS)[number];
  order: 'asc' | 'desc';
  page: number;
  pageSize: number;
}

const TRIP_QUERY_FIELDS = {
  spacecraft: z.preprocess(blankToUndefined, z.string().trim().regex(/^[A-Z0-9-]{2,32}$/, 'a spacecraft key is 2–32 characters of A–Z, 0–9 and -').optional()),
  state: z.preprocess(blankToUndefined, z.enum(TRIP_STATES, { errorMap: () => ({ message: `state must be one of ${TRIP_STATES.join(', ')}` }) }).optional()),
  kind: z.preprocess(blankToUndefined, z.enum(TRIP_KINDS as [string, ...string[]], { errorMap: () => ({ message: `kind must be one of ${TRIP_KINDS.join(', ')}` }) }).optional()),
  loop: z.preprocess(
    blankToUndefined,
    z
      .string()
      .trim()
      .regex(/^(?:[0-3]|none)$/, 'loop must be a loop id 0–3, or none for trips of the whole spacecraft')
      .transform((v): TripLoopFilter => (v === 'none' ? 'none' : Number(v)))
      .optional(),
  ),
  from: instant('from'),
  to: instant('to'),
  sort: z.preprocess(blankToUndefined, z.enum(TRIP_SORTS, { errorMap: () => ({ message: `sort must be one of ${TRIP_SORTS.join(', ')}` }) }).default('onset_at')),
  order: z.preprocess(blankToUndefined, z.enum(['asc', 'desc'], { errorMap: () => ({ message: 'order must be asc or desc' }) }).default('desc')),
  page: z.preprocess(blankToUndefined, z.coerce.number({ invalid_type_error: 'page must be a whole number from 1' }).int('page must be a whole number from 1').min(1, 'page must be a whole number from 1').default(1)),
  pageSize: z.preprocess(
    blankToUndefined,
    z.coerce.number({ invalid_type_error: 'pageSize must be a whole number 1–200' }).int('pageSize must be a whole number 1–200').min(1, 'pageSize must be a whole number 1–200').max(200, 'pageSize must be a whole number 1–200').default(50),
  ),
};
/** The names the trip list understands in its query. */
export const TRIP_QUERY_KEYS = Object.keys(TRIP_QUERY_FIELDS) as (keyof typeof TRIP_QUERY_FIELDS)[];

/**
 * Query of the trip list; shared by the Trips page and GET /api/trips:
 * ?spacecraft=&state=&kind=&loop=&from=&to=&sort=&order=&page=&pageSize= (blank means no filter;
 * from inclusive, to exclusive, on the onset time, UTC). A name it does not know is an error rather
 * than silently ignored, so a misspelt filter never returns every trip.
 */
export const tripQuerySchema = z
  .object(TRIP_QUERY_FIELDS)
  .passthrough()
  .superRefine((q, ctx) => {
    for (const k of Object.keys(q)) {
      if (!(TRIP_QUERY_KEYS as string[]).includes(k)) ctx.addIssue({ code: z.ZodIssueCode.custom, path: [k], message: `${k} is not a trip filter; the filters are ${TRIP_QUERY_KEYS.join(', ')}` });
    }
    if (q.from && q.to && Date.parse(q.to) <= Date.parse(q.from)) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['to'], message: 'to must be later than from' });
  })
  .transform(({ spacecraft, state, kind, loop, from, to, sort, order, page, pageSize }): TripQuery => ({ spacecraft, state, kind, loop, from, to, sort, order, page, pageSize }));

/** A filter of the address that was left out, with why. */
export interface DroppedFilter {
  field: string;
  value: string;
  message: string;
}

/**
 * The trip query of a page address, leaving out only the parts that are wrong (each named with
 * why), so one bad filter does not cost the others.
 */
export function parseTripQueryLenient(input: Record<string, string>): { query: TripQuery; dropped: DroppedFilter[] } {
  const rest = { ...input };
  const dropped: DroppedFilter[] = [];
  // Each pass drops the fields named by the issues; a cross-field issue (to before from) only shows
  // once every field parses, hence more than one pass.
  for (let pass = 0; pass <= TRIP_QUERY_KEYS.length + 1; pass++) {
    const r = tripQuerySchema.safeParse(rest);
    if (r.success) return { query: r.data, dropped };
    let droppedAny = false;
    for (const issue of r.error.issues) {
      const key = issue.path[0];
      if (typeof key !== 'string' || !(key in rest)) continue;
      dropped.push({ field: key, value: rest[key]!, message: issue.message });
      delete rest[key];
      droppedAny = true;
    }
    if (!droppedAny) break;
  }
  return { query: tripQuerySchema.parse({}), dropped: dropped.length ? dropped : Object.entries(input).map(([field, value]) => ({ field, value, message: 'not understood' })) };
}

export const acknowledgeInputSchema = z.object({
  note: z.string().trim().max(2000, 'at most 2000 characters').default(''),
});

export const resolveInputSchema = z.object({
  resolution: z.string().trim().min(3, 'Write the conclusion: what it was and what was done.').max(4000, 'at most 4000 characters'),
});

/** Who may resolve a trip of a kind: analysts, engineers and admins any; operators only link and channel trips. */
export const RESOLVE_RULE = 'Analysts, engineers and admins resolve any trip; operators resolve telemetry-gap and channel-limit trips only.';
export function mayResolve(roles: readonly string[], kind: string): boolean {
  if (roles.some((r) => r === 'analyst' || r === 'engineer' || r === 'admin')) return true;
  return roles.includes('operator') && (kind === 'telemetry-gap' || kind === 'channel-limit');
}
