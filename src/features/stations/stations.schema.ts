import { z } from 'zod';

/** A ground station key, as the stations table and the ingest endpoint take it. */
export const stationKeySchema = z
  .string({ required_error: 'A key is required.', invalid_type_error: 'A key is text.' })
  .regex(/^[a-z0-9-]{2,32}$/, 'A key is 2–32 characters of a–z, 0–9 and -, e.g. north-fell.');

const bounded = (what: string, min: number, max: number, unit: string) =>
  z
    .number({ required_error: `${what} is required.`, invalid_type_error: `${what} must be a number.` })
    .finite(`${what} must be a number.`)
    .min(min, `${what} must be from ${min} to ${max} ${unit}.`)
    .max(max, `${what} must be from ${min} to ${max} ${unit}.`);

/** The editable fields of a ground station (geodetic WGS-84 position and the elevation mask). */
export const stationFieldsSchema = z.object({
  name: z.string({ required_error: 'A name is required.' }).trim().min(1, 'A name is required.').max(80, 'A name is at most 80 characters.'),
  latitude_deg: bounded('Latitude', -90, 90, '°'),
  longitude_deg: bounded('Longitude', -180, 180, '°'),
  altitude_m: bounded('Altitude', -500, 10_000, 'm'),
  elevation_mask_deg: bounded('Elevation mask', 0, 45, '°'),
});

/** A new ground station: POST /api/stations and the add form. */
export const createStationInputSchema = stationFieldsSchema.extend({ key: stationKeySchema });
export type CreateStationInput = z.infer<typeof createStationInputSchema>;

/** Changed fields of a ground station: PATCH /api/stations/[key]; the key itself stays. */
export const updateStationInputSchema = stationFieldsSchema
  .partial()
  .refine((v) => Object.values(v).some((x) => x !== undefined), { message: 'Change at least one field.' });
export type UpdateStationInput = z.infer<typeof updateStationInputSchema>;
export type StationFields = z.infer<typeof stationFieldsSchema>;
