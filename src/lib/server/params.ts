import { z } from 'zod';
import type { Kysely } from 'kysely';
import type { Database } from './db/schema';
import { HttpError, parseWith } from './http';
import { findSpacecraftByKey } from './spacecraft';

export const spacecraftKeySchema = z.string().regex(/^[A-Z0-9-]{2,32}$/, 'a spacecraft key is 2–32 characters of A–Z, 0–9 and -');
export const idParamSchema = z.coerce.number().int().positive('must be a positive whole number');

/** The spacecraft named by a route or query parameter, or 404. */
export async function spacecraftFromParam(db: Kysely<Database>, key: string | undefined | null) {
  const k = parseWith(z.object({ spacecraft: spacecraftKeySchema }), { spacecraft: key ?? '' }, 'spacecraft key').spacecraft;
  const sc = await findSpacecraftByKey(db, k);
  if (!sc) throw new HttpError('NOT_FOUND', `No spacecraft with the key ${k}.`);
  return sc;
}

/** A positive integer route parameter, or 400 naming it. */
export function idParam(name: string, value: string | undefined): number {
  return parseWith(z.object({ [name]: idParamSchema }), { [name]: value }, `${name} parameter`)[name] as number;
}
