import { mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { FAULT_KINDS, PULSATION_MAX_HZ, ScenarioError, checkScenarioAgainstSheet, loadScenarioFile, parseScenario } from '../../../ingest/scenario.schema';
import { effectivenessAt, factorAt, gyroBiasAt, pulsationsAt, rampFraction } from '../../../ingest/sim/faults';
import { INGEST_DIR, loadScenario, loadSheet } from './feed-helpers';
import { BURST_RATE_HZ } from '../../../ingest/sim/spacecraft-sim';
import { BACKFILL_HOURS, BACKFILL_SCENARIOS } from '../../../ingest/demo-fleet';
import { BASELINE_WINDOWS } from '../../../src/lib/server/analysis-job';

function problemsOf(input: unknown): string[] {
  try {
    parseScenario(input, 'test.json');
  } catch (err) {
    expect(err).toBeInstanceOf(ScenarioError);
    return (err as ScenarioError).problems;
  }
  throw new Error('expected the scenario to be refused');
}

describe('scenario files', () => {
  const files = readdirSync(`${INGEST_DIR}scenarios`).filter((f) => f.endsWith('.json'));

  it('every file in ingest/scenarios validates, and each fits every demo sheet', () => {
    expect(files).toContain('healthy.json');
    expect(files).toContain('demo.json');
    for (const f of files) {
      const s = loadScenarioFile(`${INGEST_DIR}scenarios/${f}`);
      for (const key of ['MR-1', 'MR-2', 'MR-3'] as const) checkScenarioAgainstSheet(s, loadSheet(key));
    }
  });

  it('there is one scenario per fault kind, named after it and injecting it', () => {
    for (const kind of FAULT_KINDS) {
      const s = loadScenario(kind);
      expect(s.faults.map((f) => f.kind)).toEqual([kind]);
    }
  });

  it('healthy has no faults; demo has a torque-constant loss and a pulsation within the first minutes', () => {
    expect(loadScenario('healthy').faults).toEqual([]);
    const demo = loadScenario('demo');
    const kinds = demo.faults.map((f) => f.kind).sort();
    expect(kinds).toEqual(['pulsation', 'torque-constant-loss']);
    for (const f of demo.faults) expect(f.start_s).toBeLessThan(600);
  });

  it('the first start plays back the same faults after a healthy baseline hour, early enough to trip inside the playback', () => {
    const demo = loadScenario('demo');
    const recorded = loadScenario('demo-recorded');
    expect(BACKFILL_SCENARIOS['MR-1']).toBe('ingest/scenarios/demo-recorded.json');
    expect(recorded.faults.map(({ start_s: _, ...f }) => f)).toEqual(demo.faults.map(({ start_s: _, ...f }) => f));
    const loss = recorded.faults.find((f) => f.kind === 'torque-constant-loss')!;
    // the drift baseline is the first BASELINE_WINDOWS windows of data; the demo scenario trips within ten minutes of its start
    for (const f of recorded.faults) expect(f.start_s).toBeGreaterThanOrEqual(BASELINE_WINDOWS * 60 + 5 * 60);
    expect(loss.start_s + 10 * 60).toBeLessThanOrEqual(BACKFILL_HOURS * 3600 - 15 * 60);
  });
});

describe('scenario validation errors', () => {
  it('names the allowed fault kinds for an unknown kind', () => {
    expect(problemsOf({ name: 'x', faults: [{ kind: 'meteor', start_s: 1 }] })).toEqual([
      `faults[0].kind: kind must be one of ${FAULT_KINDS.map((k) => `"${k}"`).join(', ')}`,
    ]);
  });

  it('says which field is wrong and why', () => {
    const problems = problemsOf({
      name: '',
      faults: [
        { kind: 'torque-constant-loss', loopId: 0, start_s: -5, ramp_s: 10, magnitude: 1.5 },
        { kind: 'pulsation', loopId: 7, start_s: 0, frequency_Hz: 0, amplitude_Pa: 10 },
        { kind: 'sequence-gap', apid: 99, start_s: 0, count: 0 },
        { kind: 'gyro-bias', start_s: 0, bias_rad_s: [1, 2] },
      ],
    });
    expect(problems).toContain('name: name is required');
    expect(problems).toContain('faults[0].start_s: start_s must be 0 or more');
    expect(problems).toContain('faults[0].magnitude: magnitude must be below 1 (a fraction of the effectiveness)');
    expect(problems).toContain('faults[1].loopId: loopId must be 0–3');
    expect(problems).toContain('faults[1].frequency_Hz: frequency_Hz must be greater than 0');
    expect(problems).toContain('faults[2].apid: apid must be one of 16, 32, 48, 64');
    expect(problems).toContain('faults[2].count: count must be at least 1');
    expect(problems.some((i) => i.startsWith('faults[3].bias_rad_s'))).toBe(true);
  });

  it('refuses a pulsation at or above half the burst capture rate, which the captures would alias', () => {
    expect(PULSATION_MAX_HZ).toBe(BURST_RATE_HZ / 2);
    const scenario = (f: number) => ({ name: 'x', faults: [{ kind: 'pulsation', loopId: 0, start_s: 0, frequency_Hz: f, amplitude_Pa: 10 }] });
    expect(parseScenario(scenario(199), 'test.json').faults).toHaveLength(1);
    expect(problemsOf(scenario(200))).toEqual(['faults[0].frequency_Hz: frequency_Hz must be below 200, half the burst capture rate: a higher one would be captured at a false (aliased) frequency']);
  });

  it('refuses unknown keys and missing required fields', () => {
    const problems = problemsOf({ name: 'x', faults: [{ kind: 'thermal-degradation', loopId: 0, start_s: 0, magnitud: 2 }], extra: 1 });
    expect(problems.some((i) => i.includes("Unrecognized key(s) in object: 'extra'"))).toBe(true);
    expect(problems.some((i) => i.includes("'magnitud'"))).toBe(true);
    expect(problems).toContain('faults[0].magnitude: magnitude is required');
  });

  it('refuses a loop the spacecraft does not have', () => {
    const s = parseScenario({ name: 'x', faults: [{ kind: 'electrode-resistance-rise', loopId: 2, start_s: 0, magnitude: 2 }] });
    expect(() => checkScenarioAgainstSheet(s, loadSheet('MR-1'), 'x.json')).toThrow(/faults\[0\]\.loopId: MR-1 has no loop 2/);
    expect(() => checkScenarioAgainstSheet(s, loadSheet('MR-3'), 'x.json')).not.toThrow();
  });

  it('reports unreadable files and bad JSON with the path', () => {
    const dir = mkdtempSync(join(tmpdir(), 'millrace-scenario-'));
    const bad = join(dir, 'bad.json');
    writeFileSync(bad, '{ "name": "x", ');
    expect(() => loadScenarioFile(bad)).toThrow(new RegExp(`scenario ${bad} is not valid:\\n  not valid JSON`));
    expect(() => loadScenarioFile(join(dir, 'missing.json'))).toThrow(/cannot read the file/);
    rmSync(dir, { recursive: true, force: true });
  });
});

describe('fault timeline', () => {
  it('ramps linearly from start over the ramp, then holds', () => {
    expect(rampFraction(9.99, 10, 20)).toBe(0);
    expect(rampFraction(20, 10, 20)).toBeCloseTo(0.5, 12);
    expect(rampFraction(31, 10, 20)).toBe(1);
    expect(rampFraction(10, 10, 0)).toBe(1);
  });

  it('turns each kind into the value the truth model uses', () => {
    const s = parseScenario({
      name: 'x',
      faults: [
        { kind: 'torque-constant-loss', loopId: 1, start_s: 10, ramp_s: 10, magnitude: 0.4 },
        { kind: 'thermal-degradation', loopId: 1, start_s: 0, ramp_s: 10, magnitude: 3 },
        { kind: 'electrode-resistance-rise', loopId: 0, start_s: 0, magnitude: 1.5 },
        { kind: 'pulsation', loopId: 1, start_s: 5, ramp_s: 10, frequency_Hz: 20, amplitude_Pa: 50 },
        { kind: 'gyro-bias', start_s: 0, ramp_s: 4, bias_rad_s: [4e-4, 0, -2e-4] },
      ],
    });
    expect(effectivenessAt(0.7, s.faults, 1, 15)).toBeCloseTo(0.7 * 0.8, 12);
    expect(effectivenessAt(0.7, s.faults, 0, 15)).toBe(0.7);
    expect(factorAt(s.faults, 'thermal-degradation', 1, 5)).toBeCloseTo(2, 12);
    expect(factorAt(s.faults, 'electrode-resistance-rise', 0, 1)).toBe(1.5);
    expect(pulsationsAt(s.faults, 1, 10)).toEqual([{ amplitude_Pa: 25, omega_rad_s: 40 * Math.PI }]);
    expect(pulsationsAt(s.faults, 1, 4)).toEqual([]);
    expect(gyroBiasAt(s.faults, 2)).toEqual([2e-4, 0, -1e-4]);
  });
});
