import { z } from 'zod';
import { TRIP_KINDS } from './limits/quantities';

export const TRIP_STATES = ['open', 'acknowledged', 'resolved'] as const;

/** Query of the trip list; shared by the Trips page and GET /api/trips. */
export const tripQuerySchema = z.object({
  spacecraft: z.string().regex(/^[A-Z0-9-]{2,32}$/, 'a spacecraft key is 2–32 characters of A–Z, 0–9 and -').optional(),
  state: z.enum(TRIP_STATES, { errorMap: () => ({ message: `state must be one of ${TRIP_STATES.join(', ')}` }) }).optional(),
  kind: z.enum(TRIP_KINDS as [string, ...string[]], { errorMap: () => ({ message: `kind must be one of ${TRIP_KINDS.join(', ')}` }) }).optional(),
  loop: z.coerce.number().int().min(0).max(3).optional(),
  from: z.string().datetime({ message: 'from must be an ISO 8601 UTC time' }).optional(),
  to: z.string().datetime({ message: 'to must be an ISO 8601 UTC time' }).optional(),
  sort: z.enum(['onset_at', 'raised_at', 'level', 'state', 'kind', 'spacecraft']).default('onset_at'),
  order: z.enum(['asc', 'desc']).default('desc'),
  page: z.coerce.number().int().min(1).default(1),
  pageSize: z.coerce.number().int().min(1).max(200).default(50),
});
export type TripQuery = z.infer<typeof tripQuerySchema>;

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
