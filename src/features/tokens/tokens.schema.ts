import { z } from 'zod';

/** The create-token form and the endpoint's input: one schema for both. */
export const createTokenFormSchema = z.object({
  label: z.string().trim().min(1, 'Give the token a label (e.g. the station or script that uses it).').max(80, 'At most 80 characters.'),
});

export type CreateTokenForm = z.infer<typeof createTokenFormSchema>;
