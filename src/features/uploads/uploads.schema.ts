import { z } from 'zod';

/** The pass-upload form: which spacecraft, through which station, and the file. */
export const passUploadFormSchema = z.object({
  spacecraft: z.string().min(1, 'Choose the spacecraft the pass was recorded from.'),
  station: z.string(),
  file: z
    .custom<FileList>((v) => typeof FileList !== 'undefined' && v instanceof FileList && v.length > 0, 'Choose the recorded pass file to upload.')
    .refine((files) => (files.item(0)?.size ?? 0) > 0, 'That file is empty; choose the recorded pass file.'),
});

export type PassUploadForm = z.infer<typeof passUploadFormSchema>;
