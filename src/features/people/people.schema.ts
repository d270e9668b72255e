import { z } from 'zod';
import type { Role } from '../../lib/server/db/schema';

/** The roles an admin can give, in the order the forms show them (the same list as the database's). */
export const ROLE_CHOICES = ['operator', 'analyst', 'engineer', 'admin'] as const satisfies readonly Role[];

/** What each role may do, as the forms explain it. */
export const ROLE_HINTS: Record<Role, string> = {
  operator: 'watches passes, acknowledges trips, uploads pass files, keeps the on-call roster',
  analyst: 'investigates trips and backtests',
  engineer: 'sheets, limit sets, ground stations',
  admin: 'people, ingest tokens, the audit log and mail',
};

/** At least one role, each a known one; duplicates are dropped and the list sorted. */
export const roleListSchema = z
  .array(z.enum(ROLE_CHOICES, { errorMap: () => ({ message: `a role is one of ${ROLE_CHOICES.join(', ')}` }) }), {
    invalid_type_error: 'roles must be a list',
  })
  .min(1, 'Give at least one role.')
  .transform((roles) => [...new Set(roles)].sort() as Role[]);

/** POST /api/people and the invite form: who to invite, with which roles. */
export const invitePersonInputSchema = z.object({
  name: z.string({ required_error: 'Give the name.' }).trim().min(1, 'Give the name.').max(120, 'At most 120 characters.'),
  email: z
    .string({ required_error: 'Give the e-mail address.' })
    .trim()
    .min(1, 'Give the e-mail address.')
    .max(254, 'At most 254 characters.')
    .email('Give a valid e-mail address, e.g. name@example.org.')
    .transform((e) => e.toLowerCase()),
  roles: roleListSchema,
});
export type InvitePersonInput = z.infer<typeof invitePersonInputSchema>;

/** PATCH /api/people/{id}: new roles, and/or disable (true) or re-enable (false) the account. */
export const updatePersonInputSchema = z
  .object({
    roles: roleListSchema.optional(),
    disabled: z.boolean({ invalid_type_error: 'disabled is true or false' }).optional(),
  })
  .strict('Only roles and disabled can be changed here.')
  .refine((v) => v.roles !== undefined || v.disabled !== undefined, { message: 'Change roles or disabled.' });
export type UpdatePersonInput = z.infer<typeof updatePersonInputSchema>;

/** The roles form of one person: one box per role. */
export const rolesFormSchema = z.object({
  roles: z.array(z.enum(ROLE_CHOICES)).min(1, 'Keep at least one role: a person with none could not use Millrace.'),
});
export type RolesForm = z.infer<typeof rolesFormSchema>;

/** A person's id as the routes take it (the account's opaque id). */
export const personIdSchema = z.string({ required_error: 'id is required' }).regex(/^[a-z0-9]{1,64}$/, 'id is a person’s id as GET /api/people lists it');
