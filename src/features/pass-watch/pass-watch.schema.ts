import { z } from 'zod';

/** A handover note on an ended pass; shared by the pass-log form and POST /api/pass-log/[key]. */
export const passNoteInputSchema = z.object({
  station: z.string().regex(/^[a-z0-9-]{1,64}$/, 'pick the pass’s ground station'),
  aos: z.string().datetime({ message: 'pick a pass (its AOS as an ISO 8601 UTC time)' }),
  note: z.string().trim().min(3, 'Write the handover: what happened, what is open, what the next shift should watch.').max(4000, 'at most 4000 characters'),
});
export type PassNoteInput = z.infer<typeof passNoteInputSchema>;

/** Where a live stream continues: the event number after which to send (`after`), and whether to end after catching up. */
export const liveQuerySchema = z.object({
  after: z.coerce.number().int().min(0, 'after is an event number (0 or more)').optional(),
  once: z.enum(['1', 'true']).optional(),
});
