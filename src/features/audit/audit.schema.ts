import { z } from 'zod';
import { parseUtcDateTime } from '../roster/roster.schema';

const blankToUndefined = (v: unknown) => (typeof v === 'string' && v.trim() === '' ? undefined : v);

const instant = (what: string) =>
  z.preprocess(
    blankToUndefined,
    z
      .string()
      .trim()
      .refine((s) => parseUtcDateTime(s) !== null, `${what} is a UTC date and time, e.g. 2026-12-01 08:00 or 2026-12-01T08:00:00Z.`)
      .optional(),
  );

/** The audit page's filters and GET /api/audit: ?actor=&action=&targetType=&from=&to=&page=&pageSize= (from inclusive, to exclusive, UTC). */
export const auditQuerySchema = z
  .object({
    /** A user id, or "system" for entries no person made. */
    actor: z.preprocess(blankToUndefined, z.string().trim().max(64, 'actor is a user id or "system"').optional()),
    action: z.preprocess(blankToUndefined, z.string().trim().regex(/^[a-z0-9_.-]{1,64}$/, 'action is a name such as trip.acknowledge').optional()),
    targetType: z.preprocess(blankToUndefined, z.string().trim().regex(/^[a-z0-9_.-]{1,64}$/, 'targetType is a name such as limit_set').optional()),
    from: instant('from'),
    to: instant('to'),
    page: z.preprocess(blankToUndefined, z.coerce.number().int('page is a whole number').min(1, 'page starts at 1').default(1)),
    pageSize: z.preprocess(blankToUndefined, z.coerce.number().int().min(1).max(500, 'at most 500 entries a page').default(50)),
  })
  .superRefine((q, ctx) => {
    const from = q.from ? parseUtcDateTime(q.from) : null;
    const to = q.to ? parseUtcDateTime(q.to) : null;
    if (from && to && to <= from) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['to'], message: '"to" must be after "from".' });
  });
export type AuditQuery = z.infer<typeof auditQuerySchema>;
