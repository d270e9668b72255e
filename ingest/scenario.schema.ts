/**
 * Scenario files of the simulated feed: the healthy set-up of each loop, the attitude schedule and
 * the faults to inject, with times in seconds from the scenario start.
 */

import { readFileSync } from 'node:fs';
import { z } from 'zod';
import type { SpacecraftSheet } from '../src/lib/spacecraft-sheet.schema';
import { formatJsonPath } from '../src/lib/spacecraft-sheet.schema';
import { APID } from '../src/lib/telemetry/types';

const finite = (what: string) => z.number({ required_error: `${what} is required`, invalid_type_error: `${what} must be a number` }).finite(`${what} must be finite`);
const nonNegative = (what: string) => finite(what).min(0, `${what} must be 0 or more`);
const positive = (what: string) => finite(what).positive(`${what} must be greater than 0`);
const loopId = z
  .number({ required_error: 'loopId is required', invalid_type_error: 'loopId must be a number' })
  .int('loopId must be an integer')
  .min(0, 'loopId must be 0–3')
  .max(3, 'loopId must be 0–3');
const start = nonNegative('start_s');
const ramp = nonNegative('ramp_s').default(0);
const packetApid = z.union([z.literal(APID.attitude), z.literal(APID.loop), z.literal(APID.burst), z.literal(APID.event)], {
  errorMap: () => ({ message: `apid must be one of ${APID.attitude}, ${APID.loop}, ${APID.burst}, ${APID.event}` }),
});
const packetCount = z
  .number({ required_error: 'count is required', invalid_type_error: 'count must be a number' })
  .int('count must be an integer')
  .min(1, 'count must be at least 1')
  .max(1_000_000, 'count must be at most 1000000');

export const torqueConstantLossFaultSchema = z
  .object({
    kind: z.literal('torque-constant-loss'),
    loopId,
    start_s: start,
    ramp_s: ramp,
    /** Fraction of the loop's effectiveness lost by the end of the ramp. */
    magnitude: finite('magnitude').gt(0, 'magnitude must be greater than 0').lt(1, 'magnitude must be below 1 (a fraction of the effectiveness)'),
  })
  .strict();

export const thermalDegradationFaultSchema = z
  .object({
    kind: z.literal('thermal-degradation'),
    loopId,
    start_s: start,
    ramp_s: ramp,
    /** Factor by which the thermal resistances to the radiator grow. */
    magnitude: finite('magnitude').min(1, 'magnitude must be a factor of at least 1').max(100, 'magnitude must be at most 100'),
  })
  .strict();

export const electrodeResistanceRiseFaultSchema = z
  .object({
    kind: z.literal('electrode-resistance-rise'),
    loopId,
    start_s: start,
    ramp_s: ramp,
    /** Factor by which the electrode circuit resistance grows. */
    magnitude: finite('magnitude').min(1, 'magnitude must be a factor of at least 1').max(100, 'magnitude must be at most 100'),
  })
  .strict();

/**
 * Pulsation is seen through the burst captures (400 Hz): a frequency at or above their Nyquist
 * frequency would show at a false, aliased one, so the scenario refuses it.
 */
export const PULSATION_MAX_HZ = 200;

export const pulsationFaultSchema = z
  .object({
    kind: z.literal('pulsation'),
    loopId,
    start_s: start,
    ramp_s: ramp,
    frequency_Hz: positive('frequency_Hz').lt(
      PULSATION_MAX_HZ,
      `frequency_Hz must be below ${PULSATION_MAX_HZ}, half the burst capture rate: a higher one would be captured at a false (aliased) frequency`,
    ),
    amplitude_Pa: positive('amplitude_Pa').max(1e5, 'amplitude_Pa must be at most 100000'),
  })
  .strict();

export const gyroBiasFaultSchema = z
  .object({
    kind: z.literal('gyro-bias'),
    start_s: start,
    ramp_s: ramp,
    bias_rad_s: z.tuple([finite('bias_rad_s[0]'), finite('bias_rad_s[1]'), finite('bias_rad_s[2]')], {
      invalid_type_error: 'bias_rad_s must be an array of three numbers',
    }),
  })
  .strict();

const packetFault = <K extends string>(kind: K) =>
  z.object({ kind: z.literal(kind), apid: packetApid, start_s: start, count: packetCount }).strict();

export const sequenceGapFaultSchema = packetFault('sequence-gap');
export const duplicatePacketsFaultSchema = packetFault('duplicate-packets');
export const corruptPacketsFaultSchema = packetFault('corrupt-packets');

export const FAULT_KINDS = [
  'torque-constant-loss',
  'thermal-degradation',
  'electrode-resistance-rise',
  'pulsation',
  'gyro-bias',
  'sequence-gap',
  'duplicate-packets',
  'corrupt-packets',
] as const;

export const faultSchema = z.discriminatedUnion(
  'kind',
  [
    torqueConstantLossFaultSchema,
    thermalDegradationFaultSchema,
    electrodeResistanceRiseFaultSchema,
    pulsationFaultSchema,
    gyroBiasFaultSchema,
    sequenceGapFaultSchema,
    duplicatePacketsFaultSchema,
    corruptPacketsFaultSchema,
  ],
  {
    errorMap: (e, ctx) =>
      e.code === z.ZodIssueCode.invalid_union_discriminator
        ? { message: `kind must be one of ${FAULT_KINDS.map((k) => `"${k}"`).join(', ')}` }
        : { message: ctx.defaultError },
  },
);

export const scenarioSchema = z
  .object({
    name: z.string({ required_error: 'name is required' }).trim().min(1, 'name is required').max(80, 'name must be at most 80 characters'),
    description: z.string().max(2000, 'description must be at most 2000 characters').default(''),
    /** Seed of the noise generators: the same seed replays the same feed. */
    seed: z.number().int('seed must be an integer').min(0, 'seed must be 0 or more').max(0xffff_ffff, 'seed must fit 32 bits').default(1),
    /** True effectiveness of each loop at the start (healthy loops reach about 0.6–0.8 of ideal). */
    loops: z
      .array(z.object({ id: loopId, effectiveness: finite('effectiveness').gt(0, 'effectiveness must be greater than 0').max(1, 'effectiveness must be at most 1') }).strict())
      .default([]),
    attitude: z
      .object({
        /** A slew starts every slewPeriod_s; 0 holds the first attitude. */
        slewPeriod_s: nonNegative('slewPeriod_s').default(900),
        slewAngle_deg: nonNegative('slewAngle_deg').max(90, 'slewAngle_deg must be at most 90').default(10),
      })
      .strict()
      .default({}),
    /**
     * Identification dither added by the on-board software to every loop's current command: a
     * zero-mean multi-sine on the 2nd, 3rd and 4th harmonics of period_s (6, 4 and 3 s by default)
     * with its peak at amplitude × rated current (see ingest/sim/excitation.ts). On unless turned off.
     */
    excitation: z
      .object({
        enabled: z.boolean({ invalid_type_error: 'excitation.enabled must be true or false' }).default(true),
        /** Peak of the dither as a fraction of the loop's rated current (0.1–0.2 is usual). */
        amplitude: finite('amplitude').min(0, 'amplitude must be 0 or more').max(0.5, 'amplitude must be at most 0.5 (a fraction of the rated current)').default(0.15),
        /** Repeat period of the multi-sine, s; its lines are at half, a third and a quarter of it. */
        period_s: finite('period_s').min(2, 'period_s must be at least 2').max(120, 'period_s must be at most 120').default(12),
      })
      .strict()
      .default({}),
    faults: z.array(faultSchema).default([]),
  })
  .strict();

export type Scenario = z.infer<typeof scenarioSchema>;
export type ScenarioInput = z.input<typeof scenarioSchema>;
export type Fault = z.infer<typeof faultSchema>;
export type FaultKind = Fault['kind'];

/** A scenario that failed validation; `problems` are "path: message" lines. */
export class ScenarioError extends Error {
  readonly problems: string[];
  constructor(source: string, problems: string[]) {
    super(`scenario ${source} is not valid:\n  ${problems.join('\n  ')}`);
    this.name = 'ScenarioError';
    this.problems = problems;
  }
}

/** Validates a parsed scenario; throws ScenarioError listing every problem. */
export function parseScenario(input: unknown, source = '(inline)'): Scenario {
  const result = scenarioSchema.safeParse(input);
  if (!result.success) {
    throw new ScenarioError(
      source,
      result.error.issues.map((i) => `${formatJsonPath(i.path)}: ${i.message}`),
    );
  }
  return result.data;
}

/** Reads and validates a scenario file. */
export function loadScenarioFile(path: string): Scenario {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (err) {
    throw new ScenarioError(path, [`cannot read the file (${(err as Error).message})`]);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    throw new ScenarioError(path, [`not valid JSON (${(err as Error).message})`]);
  }
  return parseScenario(json, path);
}

/** Checks that every loop a scenario names exists on the spacecraft; throws ScenarioError. */
export function checkScenarioAgainstSheet(scenario: Scenario, sheet: SpacecraftSheet, source = scenario.name): void {
  const ids = new Set(sheet.loops.map((l) => l.id));
  const problems: string[] = [];
  scenario.loops.forEach((l, i) => {
    if (!ids.has(l.id)) problems.push(`loops[${i}].id: ${sheet.spacecraft.key} has no loop ${l.id}`);
  });
  scenario.faults.forEach((f, i) => {
    if ('loopId' in f && !ids.has(f.loopId)) problems.push(`faults[${i}].loopId: ${sheet.spacecraft.key} has no loop ${f.loopId}`);
  });
  if (problems.length > 0) throw new ScenarioError(source, problems);
}
