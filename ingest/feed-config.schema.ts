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

const stationKey = z.string().regex(/^[a-z0-9-]{2,32}$/, 'station key must be 2–32 characters of a–z, 0–9 and -');

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
    /** Ground stations the passes rotate through (keys, or objects with a key). */
    stations: z.array(z.union([stationKey, z.object({ key: stationKey }).passthrough()])).min(1).optional(),
  })
  .strict();

export type FeedConfigInput = z.input<typeof feedConfigSchema>;

/** A validated feed configuration with sheets and scenarios loaded. */
export interface FeedConfig {
  baseUrl: string;
  stations: string[] | undefined;
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
  if (problems.length > 0) throw new FeedConfigError(source, problems);
  return {
    baseUrl: parsed.data.baseUrl.replace(/\/+$/, ''),
    stations: parsed.data.stations?.map((s) => (typeof s === 'string' ? s : s.key)),
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
