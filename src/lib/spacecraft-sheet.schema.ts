import { z } from 'zod';
import { symmetricEigenvalues3 } from './physics/eigen3';

/**
 * The spacecraft sheet of the telemetry contract, §4: mass properties and loop geometry,
 * effective-dated. Shared by the upload form, the JSON API and the seed.
 */

const positive = (what: string) =>
  z.number({ invalid_type_error: `${what} must be a number` }).finite().positive(`${what} must be greater than 0`);

/** Published property measurements of eutectic Ga–In–Sn near 20 °C (Liu, Sen & Kim, 2012). */
export const GALINSTAN_DEFAULTS = {
  density_kg_m3: 6440,
  viscosity_Pa_s: 0.0024,
  conductivity_S_m: 3.46e6,
} as const;

const vec3 = z.tuple([z.number().finite(), z.number().finite(), z.number().finite()], {
  invalid_type_error: 'must be an array of three numbers',
});

const circleShapeSchema = z.object({
  kind: z.literal('circle'),
  radius_m: positive('radius_m'),
});

const roundedRectangleShapeSchema = z
  .object({
    kind: z.literal('rounded-rectangle'),
    width_m: positive('width_m'),
    height_m: positive('height_m'),
    cornerRadius_m: z.number().finite().min(0, 'cornerRadius_m must be 0 or more'),
  });

export const loopShapeSchema = z.discriminatedUnion('kind', [circleShapeSchema, roundedRectangleShapeSchema], {
  errorMap: (issue, ctx) =>
    issue.code === z.ZodIssueCode.invalid_union_discriminator
      ? { message: 'kind must be "circle" or "rounded-rectangle"' }
      : { message: ctx.defaultError },
});

export const sheetLoopSchema = z.object({
  id: z.number().int('id must be an integer').min(0, 'id must be 0–3').max(3, 'id must be 0–3'),
  axis: vec3.superRefine((v, ctx) => {
    const n = Math.hypot(v[0], v[1], v[2]);
    if (Math.abs(n - 1) > 1e-6) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `axis must be a unit vector (its length is ${n.toPrecision(8)})` });
    }
  }),
  shape: loopShapeSchema,
  channel: z.object({ alongField_m: positive('alongField_m'), alongCurrent_m: positive('alongCurrent_m') }),
  fluid: z
    .object({
      density_kg_m3: positive('density_kg_m3'),
      viscosity_Pa_s: positive('viscosity_Pa_s'),
      conductivity_S_m: positive('conductivity_S_m'),
    })
    .default({ ...GALINSTAN_DEFAULTS }),
  pumpStations: z
    .array(z.object({ field_T: positive('field_T'), electrodeLength_m: positive('electrodeLength_m') }))
    .min(1, 'a loop needs at least one pump station'),
  ratedCurrent_A: positive('ratedCurrent_A'),
}).superRefine((loop, ctx) => {
  const s = loop.shape;
  if (s.kind === 'rounded-rectangle' && s.cornerRadius_m > Math.min(s.width_m, s.height_m) / 2) {
    ctx.addIssue({
      code: z.ZodIssueCode.custom,
      path: ['shape', 'cornerRadius_m'],
      message: 'cornerRadius_m must be at most half the smaller of width_m and height_m',
    });
  }
});

const tleLine = (n: 1 | 2) =>
  z.string().superRefine((line, ctx) => {
    if (line.length !== 69) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `TLE line ${n} must be 69 characters (it has ${line.length})` });
      return;
    }
    if (!line.startsWith(`${n} `)) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `TLE line ${n} must start with "${n} "` });
      return;
    }
    // Modulo-10 checksum: digits count their value, '-' counts 1, all else 0 (common practice of the format).
    let sum = 0;
    for (const ch of line.slice(0, 68)) sum += ch === '-' ? 1 : ch >= '0' && ch <= '9' ? Number(ch) : 0;
    if (sum % 10 !== Number(line[68])) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `TLE line ${n} checksum is wrong (expected ${sum % 10})` });
    }
  });

export const inertiaSchema = z
  .tuple([vec3, vec3, vec3], { invalid_type_error: 'inertia_kg_m2 must be a 3×3 array of numbers' })
  .superRefine((m, ctx) => {
    const scale = Math.max(...m.flat().map(Math.abs));
    for (const [i, j] of [[0, 1], [0, 2], [1, 2]] as const) {
      if (Math.abs(m[i][j] - m[j][i]) > 1e-9 * scale) {
        ctx.addIssue({
          code: z.ZodIssueCode.custom,
          path: [i, j],
          message: `inertia must be symmetric: [${i}][${j}] = ${m[i][j]} but [${j}][${i}] = ${m[j][i]}`,
        });
        return;
      }
    }
    const [l1, l2, l3] = symmetricEigenvalues3(m);
    if (!(l1 > 0)) {
      ctx.addIssue({
        code: z.ZodIssueCode.custom,
        message: `inertia must be positive definite (smallest principal moment is ${l1.toPrecision(6)} kg·m²)`,
      });
      return;
    }
    // Largest principal moment may not exceed the sum of the other two (with rounding slack).
    if (l3 > (l1 + l2) * (1 + 1e-9)) {
      ctx.addIssue({
        code: z.ZodIssueCode.custom,
        message: `principal moments ${[l1, l2, l3].map((x) => x.toPrecision(6)).join(', ')} kg·m² break the triangle inequality (largest must not exceed the sum of the other two)`,
      });
    }
  });

export const spacecraftSheetSchema = z
  .object({
    sheetVersion: z.literal(1, { errorMap: () => ({ message: 'sheetVersion must be 1' }) }),
    spacecraft: z.object({
      key: z.string().regex(/^[A-Z0-9-]{2,32}$/, 'key must be 2–32 characters of A–Z, 0–9 and -'),
      name: z.string().trim().min(1, 'name is required').max(120, 'name must be at most 120 characters'),
    }),
    effectiveFrom: z
      .string()
      .datetime({ message: 'effectiveFrom must be an ISO 8601 UTC time such as 2026-12-01T00:00:00Z' }),
    massProperties: z.object({ mass_kg: positive('mass_kg'), inertia_kg_m2: inertiaSchema }),
    orbit: z.object({ tle: z.tuple([tleLine(1), tleLine(2)]) }),
    loops: z.array(sheetLoopSchema).min(1, 'a spacecraft carries one to four loops').max(4, 'a spacecraft carries one to four loops'),
  })
  .superRefine((s, ctx) => {
    const seen = new Set<number>();
    s.loops.forEach((loop, i) => {
      if (seen.has(loop.id)) {
        ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['loops', i, 'id'], message: `loop id ${loop.id} appears twice` });
      }
      seen.add(loop.id);
    });
  });

export type SpacecraftSheet = z.infer<typeof spacecraftSheetSchema>;
export type SheetLoop = z.infer<typeof sheetLoopSchema>;
export type LoopShape = z.infer<typeof loopShapeSchema>;

/** A zod path as a JSON path: ['loops', 0, 'axis'] → "loops[0].axis". */
export function formatJsonPath(path: readonly (string | number)[]): string {
  return path.reduce<string>(
    (acc, part) => (typeof part === 'number' ? `${acc}[${part}]` : acc ? `${acc}.${part}` : part),
    '',
  ) || '(root)';
}

/** Field errors keyed by JSON path, for the error envelope. */
export function sheetIssuesByPath(error: z.ZodError): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  for (const issue of error.issues) (out[formatJsonPath(issue.path)] ??= []).push(issue.message);
  return out;
}
