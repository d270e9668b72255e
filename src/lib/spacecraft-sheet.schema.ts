import { z } from 'zod';
import { symmetricEigenvalues3 } from './physics/eigen3';

/**
 * The spacecraft sheet of the telemetry contract, §4: mass properties and loop geometry,
 * effective-dated. Shared by the upload form, the JSON API and the seed.
 */

/**
 * An object that refuses keys it does not define: a misspelt key ("fluids") would otherwise be
 * dropped silently and a default used in its place. The issue sits at the object; the message
 * names the key, and sheetIssuesByPath files it under the key's own path.
 */
function strictObject<T extends z.ZodRawShape>(shape: T) {
  const allowed = Object.keys(shape).join(', ');
  return z
    .object(shape, {
      errorMap: (issue, ctx) =>
        issue.code === z.ZodIssueCode.unrecognized_keys
          ? { message: `${issue.keys.map((k) => `"${k}"`).join(', ')} ${issue.keys.length === 1 ? 'is not a field' : 'are not fields'} of the sheet here (the fields here are ${allowed})` }
          : { message: ctx.defaultError },
    })
    .strict();
}

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

const circleShapeSchema = strictObject({
  kind: z.literal('circle'),
  radius_m: positive('radius_m'),
});

// Every dimension of a shape is positive: a rounded rectangle with corner radius 0 has sharp
// corners, which is not the shape named, and its centreline would turn on the spot.
const roundedRectangleShapeSchema = strictObject({
  kind: z.literal('rounded-rectangle'),
  width_m: positive('width_m'),
  height_m: positive('height_m'),
  cornerRadius_m: positive('cornerRadius_m'),
});

// The corner check sits on the shape, so it runs whatever else in the loop or the sheet is wrong.
export const loopShapeSchema = z
  .discriminatedUnion('kind', [circleShapeSchema, roundedRectangleShapeSchema], {
    errorMap: (issue, ctx) =>
      issue.code === z.ZodIssueCode.invalid_union_discriminator
        ? { message: 'kind must be "circle" or "rounded-rectangle"' }
        : { message: ctx.defaultError },
  })
  .superRefine((s, ctx) => {
    if (s.kind === 'rounded-rectangle' && s.cornerRadius_m > Math.min(s.width_m, s.height_m) / 2) {
      ctx.addIssue({
        code: z.ZodIssueCode.custom,
        path: ['cornerRadius_m'],
        message: 'cornerRadius_m must be at most half the smaller of width_m and height_m',
      });
    }
  });

/** How far from 1 the length of an axis may be; within it the axis is stored normalised. */
export const AXIS_TOLERANCE = 1e-6;

export const sheetLoopSchema = strictObject({
  id: z.number().int('id must be an integer').min(0, 'id must be 0–3').max(3, 'id must be 0–3'),
  axis: vec3
    .superRefine((v, ctx) => {
      const n = Math.hypot(v[0], v[1], v[2]);
      if (!(Math.abs(n - 1) <= AXIS_TOLERANCE)) {
        ctx.addIssue({ code: z.ZodIssueCode.custom, message: `axis must be a unit vector (its length is ${n.toPrecision(8)}, more than ${AXIS_TOLERANCE} from 1)` });
      }
    })
    .transform((v): [number, number, number] => {
      const n = Math.hypot(v[0], v[1], v[2]);
      return [v[0] / n, v[1] / n, v[2] / n];
    }),
  shape: loopShapeSchema,
  channel: strictObject({ alongField_m: positive('alongField_m'), alongCurrent_m: positive('alongCurrent_m') }),
  fluid: strictObject({
    density_kg_m3: positive('density_kg_m3'),
    viscosity_Pa_s: positive('viscosity_Pa_s'),
    conductivity_S_m: positive('conductivity_S_m'),
  }).default({ ...GALINSTAN_DEFAULTS }),
  pumpStations: z
    .array(strictObject({ field_T: positive('field_T'), electrodeLength_m: positive('electrodeLength_m') }))
    .min(1, 'a loop needs at least one pump station'),
  ratedCurrent_A: positive('ratedCurrent_A'),
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

/**
 * Loop ids appearing twice, checked on the raw input so that the issue is reported together with
 * every other one (a refinement on the parsed sheet would run only once all else is valid).
 */
function checkLoopIds(raw: unknown, ctx: z.RefinementCtx): void {
  const loops = (raw as { loops?: unknown } | null)?.loops;
  if (!Array.isArray(loops)) return;
  const seen = new Set<number>();
  loops.forEach((loop, i) => {
    const id = (loop as { id?: unknown } | null)?.id;
    if (typeof id !== 'number' || !Number.isInteger(id)) return;
    if (seen.has(id)) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['loops', i, 'id'], message: `loop id ${id} appears twice` });
    seen.add(id);
  });
}

export const spacecraftSheetSchema = z.preprocess(
  (raw, ctx) => {
    checkLoopIds(raw, ctx);
    return raw;
  },
  strictObject({
    sheetVersion: z.literal(1, { errorMap: () => ({ message: 'sheetVersion must be 1' }) }),
    spacecraft: strictObject({
      key: z.string().regex(/^[A-Z0-9-]{2,32}$/, 'key must be 2–32 characters of A–Z, 0–9 and -'),
      name: z.string().trim().min(1, 'name is required').max(120, 'name must be at most 120 characters'),
    }),
    effectiveFrom: z
      .string()
      .datetime({ message: 'effectiveFrom must be an ISO 8601 UTC time such as 2026-12-01T00:00:00Z' }),
    massProperties: strictObject({ mass_kg: positive('mass_kg'), inertia_kg_m2: inertiaSchema }),
    orbit: strictObject({ tle: z.tuple([tleLine(1), tleLine(2)]) }),
    loops: z.array(sheetLoopSchema).min(1, 'a spacecraft carries one to four loops').max(4, 'a spacecraft carries one to four loops'),
  }),
);

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

/**
 * Field errors keyed by JSON path, for the error envelope. An unknown key is filed under its own
 * path (loops[0].fluids), not under the object that holds it.
 */
export function sheetIssuesByPath(error: z.ZodError): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  for (const issue of error.issues) {
    if (issue.code === z.ZodIssueCode.unrecognized_keys) {
      for (const key of issue.keys) (out[formatJsonPath([...issue.path, key])] ??= []).push(issue.message);
    } else (out[formatJsonPath(issue.path)] ??= []).push(issue.message);
  }
  return out;
}
