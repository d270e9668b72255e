/**
 * Configuration of the simulated feed process: where to send, and which spacecraft to simulate
 * with which sheet, scenario and ingest token.
 */

import { readFileSync } from 'node:fs';
import { dirname, isAbsolute, resolve } from 'node:path';
import { z } from 'zod';
import { formatJsonPath, spacecraftSheetSchema } from '../src/lib/spacecraft-sheet.schema';
import type { SpacecraftSheet } from '../src/lib/spacecraft-sheet.schema';
import { checkScenarioAgainstSheet, loadScenarioFile } from './scenario.schema';
import type { Scenario } from './scenario.schema';
import type { FeedStation } from './passes';

const stationKey = z.string().regex(/^[a-z0-9-]{2,32}$/, 'station key must be 2–32 characters of a–z, 0–9 and -');
const within = (what: string, min: number, max: number) =>
  z.number({ invalid_type_error: `${what} must be a number` }).min(min, `${what} must be from ${min} to ${max}`).max(max, `${what} must be from ${min} to ${max}`);

/** A ground station: its key, and where it stands for predicted passes (WGS-84, metres, degrees). */
const stationObject = z
  .object({
    key: stationKey,
    name: z.string().optional(),
    latitude_deg: within('latitude_deg', -90, 90).optional(),
    longitude_deg: within('longitude_deg', -180, 180).optional(),
    altitude_m: within('altitude_m', -500, 10_000).optional(),
    elevation_mask_deg: within('elevation_mask_deg', 0, 45).optional(),
  })
  .strict();

export const feedConfigSchema = z
  .object({
    baseUrl: z.string().url('baseUrl must be an absolute URL such as http://127.0.0.1:4321'),
    spacecraft: z
      .array(
        z
          .object({
            key: z.string().regex(/^[A-Z0-9-]{2,32}$/, 'key must be 2–32 characters of A–Z, 0–9 and -'),
            token: z.string().min(1, 'token is required'),
            /** The sheet itself, or the path of its JSON file. */
            sheet: z.union([z.string().min(1), z.record(z.unknown())], { errorMap: () => ({ message: 'sheet must be a sheet object or the path of a sheet file' }) }),
            /** Path of the scenario file. */
            scenario: z.string().min(1, 'scenario is required'),
            /** Scenario start, Unix ms; default the feed's start. */
            startedAtMs: z.number().int().positive().optional(),
          })
          .strict(),
      )
      .min(1, 'spacecraft must list at least one spacecraft'),
    /**
     * Ground stations. Predicted passes (the default) need each one's position and mask; the fixed
     * schedule takes keys alone and rotates through them.
     */
    stations: z.array(z.union([stationKey, stationObject])).min(1).optional(),
    /** 'predicted' (default): SGP4 passes from each sheet's element set; 'fixed': a pass every 15 min, for tests. */
    schedule: z.enum(['predicted', 'fixed'], { errorMap: () => ({ message: 'schedule must be "predicted" or "fixed"' }) }).default('predicted'),
  })
  .strict();

export type FeedConfigInput = z.input<typeof feedConfigSchema>;

/** A validated feed configuration with sheets and scenarios loaded. */
export interface FeedConfig {
  baseUrl: string;
  /** Keys of the configured stations, in order. */
  stations: string[] | undefined;
  schedule: 'predicted' | 'fixed';
  /** The configured stations with positions (every one of them when the schedule is predicted). */
  stationSites: FeedStation[];
  spacecraft: {
    key: string;
    token: string;
    sheet: SpacecraftSheet;
    scenario: Scenario;
    scenarioPath: string;
    startedAtMs: number | undefined;
  }[];
}

/** A configuration that failed validation; the message lists every problem. */
export class FeedConfigError extends Error {
  constructor(source: string, problems: string[]) {
    super(`feed configuration ${source} is not valid:\n  ${problems.join('\n  ')}`);
    this.name = 'FeedConfigError';
  }
}

/** A relative path is taken relative to the configuration file, else to the working folder. */
function resolvePath(path: string, configDir: string): string {
  if (isAbsolute(path)) return path;
  const nearConfig = resolve(configDir, path);
  try {
    readFileSync(nearConfig);
    return nearConfig;
  } catch {
    return resolve(path);
  }
}

function readJson(path: string, what: string, problems: string[]): unknown {
  try {
    return JSON.parse(readFileSync(path, 'utf8'));
  } catch (err) {
    problems.push(`${what}: cannot read ${path} (${(err as Error).message})`);
    return undefined;
  }
}

/** Validates parsed configuration JSON; paths resolve against `configDir`. */
export function parseFeedConfig(input: unknown, configDir: string, source = '(inline)'): FeedConfig {
  const parsed = feedConfigSchema.safeParse(input);
  if (!parsed.success) throw new FeedConfigError(source, parsed.error.issues.map((i) => `${formatJsonPath(i.path)}: ${i.message}`));
  const problems: string[] = [];
  const spacecraft: FeedConfig['spacecraft'] = [];
  const keys = new Set<string>();
  parsed.data.spacecraft.forEach((sc, i) => {
    const at = `spacecraft[${i}]`;
    if (keys.has(sc.key)) problems.push(`${at}.key: ${sc.key} appears twice`);
    keys.add(sc.key);
    const sheetJson = typeof sc.sheet === 'string' ? readJson(resolvePath(sc.sheet, configDir), `${at}.sheet`, problems) : sc.sheet;
    if (sheetJson === undefined) return;
    const sheet = spacecraftSheetSchema.safeParse(sheetJson);
    if (!sheet.success) {
      for (const zi of sheet.error.issues) problems.push(`${at}.sheet.${formatJsonPath(zi.path)}: ${zi.message}`);
      return;
    }
    if (sheet.data.spacecraft.key !== sc.key) problems.push(`${at}.sheet: the sheet is for ${sheet.data.spacecraft.key}, not ${sc.key}`);
    const scenarioPath = resolvePath(sc.scenario, configDir);
    let scenario: Scenario;
    try {
      scenario = loadScenarioFile(scenarioPath);
      checkScenarioAgainstSheet(scenario, sheet.data, scenarioPath);
    } catch (err) {
      problems.push(`${at}.scenario: ${(err as Error).message}`);
      return;
    }
    spacecraft.push({ key: sc.key, token: sc.token, sheet: sheet.data, scenario, scenarioPath, startedAtMs: sc.startedAtMs });
  });
  const stationSites: FeedStation[] = [];
  parsed.data.stations?.forEach((s, i) => {
    const o = typeof s === 'string' ? { key: s } : s;
    const { latitude_deg, longitude_deg, altitude_m, elevation_mask_deg } = o as Partial<FeedStation>;
    if (latitude_deg !== undefined && longitude_deg !== undefined && altitude_m !== undefined && elevation_mask_deg !== undefined) {
      stationSites.push({ key: o.key, latitude_deg, longitude_deg, altitude_m, elevation_mask_deg });
    } else if (parsed.data.schedule === 'predicted') {
      problems.push(`stations[${i}]: predicted passes need the station's latitude_deg, longitude_deg, altitude_m and elevation_mask_deg (or set "schedule": "fixed")`);
    }
  });
  if (problems.length > 0) throw new FeedConfigError(source, problems);
  return {
    baseUrl: parsed.data.baseUrl.replace(/\/+$/, ''),
    stations: parsed.data.stations?.map((s) => (typeof s === 'string' ? s : s.key)),
    schedule: parsed.data.schedule,
    stationSites,
    spacecraft,
  };
}

/** Reads and validates a configuration file. */
export function loadFeedConfig(path: string): FeedConfig {
  const problems: string[] = [];
  const json = readJson(path, 'configuration', problems);
  if (json === undefined) throw new FeedConfigError(path, problems);
  return parseFeedConfig(json, dirname(resolve(path)), path);
}
