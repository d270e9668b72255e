import { z } from 'zod';

/** Parse JSON text; the error names where the text stops being JSON. */
export function parseJsonText(text: string): { ok: true; value: unknown } | { ok: false; message: string } {
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch (err) {
    return { ok: false, message: err instanceof Error ? err.message : String(err) };
  }
}

/** The sheet-upload form: the sheet as JSON text, from a chosen .json file or pasted. */
export const sheetUploadFormSchema = z.object({
  json: z
    .string()
    .trim()
    .min(1, 'Choose a .json file or paste the sheet JSON.')
    .superRefine((text, ctx) => {
      const r = parseJsonText(text);
      if (!r.ok) {
        ctx.addIssue({ code: z.ZodIssueCode.custom, message: `This is not JSON (${r.message}). Check for a missing comma, quote or brace.` });
        return;
      }
      if (typeof r.value !== 'object' || r.value === null || Array.isArray(r.value)) {
        ctx.addIssue({ code: z.ZodIssueCode.custom, message: 'A sheet is one JSON object: it starts with { and ends with }.' });
      }
    }),
});

export type SheetUploadForm = z.infer<typeof sheetUploadFormSchema>;
