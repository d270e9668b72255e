import { z } from 'zod';

/** POST /api/limit-sets: a new draft of a spacecraft, a copy of its active set (or of the set named). */
export const createDraftInputSchema = z.object({
  spacecraft: z.string().trim().min(1, 'Name the spacecraft.'),
  copyOf: z.number().int().positive().optional(),
});
export type CreateDraftInput = z.infer<typeof createDraftInputSchema>;

/** GET /api/limit-sets?spacecraft=KEY */
export const limitSetListQuerySchema = z.object({ spacecraft: z.string().trim().min(1, 'Name the spacecraft (?spacecraft=KEY).') });

/** Submit or approve, with an optional comment. */
export const reviewCommentInputSchema = z.object({ comment: z.string().trim().max(2000, 'at most 2000 characters').default('') });
export type ReviewCommentInput = z.infer<typeof reviewCommentInputSchema>;

/** Return to the author: the comments say what to change. */
export const returnInputSchema = z.object({
  comment: z.string().trim().min(1, 'Say what the author should change.').max(2000, 'at most 2000 characters'),
});
export type ReturnInput = z.infer<typeof returnInputSchema>;

const instant = z.string().datetime({ offset: true, message: 'must be a date and time (ISO 8601, UTC)' });

/** POST /api/limit-sets/{id}/backtests: the span to replay; both omitted = the last 30 days held. */
export const backtestInputSchema = z
  .object({ from: instant.optional(), to: instant.optional() })
  .superRefine((v, ctx) => {
    if ((v.from === undefined) !== (v.to === undefined)) ctx.addIssue({ code: z.ZodIssueCode.custom, path: [v.from === undefined ? 'from' : 'to'], message: 'give both ends of the span, or neither' });
    if (v.from && v.to && !(Date.parse(v.to) > Date.parse(v.from))) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['to'], message: 'must be after the start' });
  });
export type BacktestInput = z.infer<typeof backtestInputSchema>;
