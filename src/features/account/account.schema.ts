import { z } from 'zod';

/**
 * POST /api/account/password. The password policy itself (length) is the server's passwordProblem;
 * its answer comes back as a field error on newPassword.
 */
export const changePasswordInputSchema = z.object({
  currentPassword: z.string({ required_error: 'Enter your current password.' }).min(1, 'Enter your current password.').max(200, 'That password is too long.'),
  newPassword: z.string({ required_error: 'Choose a new password.' }).min(1, 'Choose a new password.').max(1000, 'That password is too long.'),
});
export type ChangePasswordInput = z.infer<typeof changePasswordInputSchema>;

/** The change-password form: the API's fields and the new password typed twice. */
export const changePasswordFormSchema = changePasswordInputSchema
  .extend({ confirmPassword: z.string().min(1, 'Type the new password again.') })
  .refine((v) => v.confirmPassword === v.newPassword, { path: ['confirmPassword'], message: 'The two new passwords differ; type the same one twice.' });
export type ChangePasswordForm = z.infer<typeof changePasswordFormSchema>;
