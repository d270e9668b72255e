/**
 * End to end: the simulated spacecraft (truth model, ingest/) generates packets, the ground's decoder
 * turns them into the physics core's typed arrays, and analyseSpan must recover what the truth model
 * was told: each loop's effectiveness η (torque constant over the ideal I·B·a·R of the sheet, and the
 * pump-pressure constant over the ideal Σ B/b), and every injected fault. The two sides were written
 * independently; the truth is the scenario (its loop effectiveness, the sim's default effectiveness,
 * the fault timeline of ingest/sim/faults.ts), not anything the ground computed.
 */

import { describe, expect, it } from 'vitest';
import { analyseSpan, baselineStats, detectDrift } from '../../../src/lib/physics/analysis';
import type { LoopWindow, SpanAnalysis } from '../../../src/lib/physics/analysis';
import type { SpacecraftSheet } from '../../../src/lib/spacecraft-sheet.schema';
import type { Scenario } from '../../../ingest/scenario.schema';
import { effectivenessAt } from '../../../ingest/sim/faults';
import { DEFAULT_EFFECTIVENESS } from '../../../ingest/sim/spacecraft-sim';
import { T0, generateSpan, loadScenario, loadSheet } from '../feed/feed-helpers';

const W = 60;
const T0_S = T0 / 1000;

/** The sim's effectiveness of a loop at the scenario start (the scenario's, else the sim's default). */
function eta0(sheet: SpacecraftSheet, sc: Scenario, loopId: number): number {
  const index = sheet.loops.findIndex((l) => l.id === loopId);
  return sc.loops.find((l) => l.id === loopId)?.effectiveness ?? DEFAULT_EFFECTIVENESS[index % 4]!;
}

/** Mean true effectiveness over a window (1 s steps through the fault timeline). */
function trueWindowEta(sheet: SpacecraftSheet, sc: Scenario, loopId: number, w: LoopWindow): number {
  let s = 0, n = 0;
  for (let t = w.start_s - T0_S + 0.5; t < w.end_s - T0_S; t += 1) {
    s += effectivenessAt(eta0(sheet, sc, loopId), sc.faults, loopId, t);
    n++;
  }
  return s / n;
}

function median(xs: readonly number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
}

function analyse(key: 'MR-1' | 'MR-2' | 'MR-3', sc: Scenario, seconds: number): { sheet: SpacecraftSheet; a: SpanAnalysis } {
  const sheet = loadSheet(key);
  const d = generateSpan(sheet, sc, seconds);
  expect(d.rejects).toEqual([]);
  return { sheet, a: analyseSpan(d.input, sheet, { window_s: W }) };
}

/** Windows that lie wholly inside [from, to) s from the scenario start. */
const within = (ws: readonly LoopWindow[], from: number, to: number) => ws.filter((w) => w.start_s - T0_S >= from && w.end_s - T0_S <= to);

describe('healthy loops: the ground recovers the truth model’s effectiveness (25 min, 60 s windows)', () => {
  const healthy = loadScenario('healthy');
  for (const key of ['MR-1', 'MR-2', 'MR-3'] as const) {
    it(`${key}: at least 80 % of windows carry an effectiveness; torque and pressure medians within ±5 % of η`, () => {
      const { sheet, a } = analyse(key, healthy, 25 * 60);
      for (const l of a.loops) {
        const full = within(l.windows, 0, 25 * 60);
        expect(full).toHaveLength(25);
        const rows = full.filter((w) => w.effectiveness !== null);
        expect(rows.length / full.length).toBeGreaterThanOrEqual(0.8);
        const eta = eta0(sheet, healthy, l.loopId);
        const torque = median(rows.map((w) => w.effectiveness! / eta));
        const pressure = median(full.filter((w) => w.pressureEffectiveness !== null).map((w) => w.pressureEffectiveness! / eta));
        expect(Math.abs(torque - 1)).toBeLessThanOrEqual(0.05);
        expect(Math.abs(pressure - 1)).toBeLessThanOrEqual(0.05);
        // the standard error the ground states is honest: most windows lie within 3 of them. η is the
        // truth at 20 °C magnets; the sim's magnets weaken by 0.1 %/K, so the compensated figure is the one to hold to it
        const z = rows.map((w) => (w.compensatedEffectiveness! - eta) / w.effectivenessStdErr!);
        expect(z.filter((x) => Math.abs(x) <= 3).length / z.length).toBeGreaterThanOrEqual(0.8);
      }
    });
  }

  it('magnet temperature compensation removes what the warm or cold magnets did to the raw figure', () => {
    const { sheet, a } = analyse('MR-3', healthy, 25 * 60);
    let raw = 0, comp = 0, n = 0, offTemp = 0;
    for (const l of a.loops) {
      const eta = eta0(sheet, healthy, l.loopId);
      for (const w of within(l.windows, 0, 25 * 60)) {
        if (w.effectiveness === null || w.compensatedEffectiveness === null) continue;
        raw += (w.effectiveness - eta) ** 2;
        comp += (w.compensatedEffectiveness - eta) ** 2;
        offTemp += Math.abs(w.magnetTempMean_c! - 20);
        n++;
      }
    }
    expect(offTemp / n, 'the magnets must sit away from 20 °C for this to say anything').toBeGreaterThan(3);
    expect(Math.sqrt(comp / n)).toBeLessThan(0.7 * Math.sqrt(raw / n));
  });
});

describe('injected faults show up in the ground’s figures', () => {
  it('torque-constant-loss: effectiveness falls by the injected half, and detectDrift places the onset in the ramp', () => {
    const sc = loadScenario('torque-constant-loss');
    const f = sc.faults[0]!;
    if (f.kind !== 'torque-constant-loss') throw new Error('unexpected fault');
    const { sheet, a } = analyse('MR-1', sc, 25 * 60);
    const ws = a.loops[0]!.windows;
    const before = within(ws, 0, f.start_s).filter((w) => w.effectiveness !== null);
    const after = within(ws, f.start_s + f.ramp_s, 25 * 60).filter((w) => w.effectiveness !== null);
    expect(before.length).toBeGreaterThanOrEqual(8);
    expect(after.length).toBeGreaterThanOrEqual(10);
    const ratio = median(after.map((w) => w.effectiveness!)) / median(before.map((w) => w.effectiveness!));
    expect(Math.abs(ratio / (1 - f.magnitude) - 1)).toBeLessThanOrEqual(0.05);
    for (const w of after) expect(w.effectiveness! / trueWindowEta(sheet, sc, 0, w)).toBeCloseTo(1, 1);

    // drift on the series of window effectiveness, each stamped at its window's end (when it is known)
    const full = within(ws, 0, 25 * 60);
    const t = full.map((w) => w.end_s);
    const v = full.map((w) => w.effectiveness ?? Number.NaN);
    const base = baselineStats(v, 0, full.findIndex((w) => w.end_s - T0_S > f.start_s));
    expect(base.n).toBeGreaterThanOrEqual(8);
    const drift = detectDrift(t, v, base);
    expect(drift.detected).toBe(true);
    expect(drift.direction).toBe('down');
    const onset = drift.onsetTime_s! - T0_S, signal = drift.signalTime_s! - T0_S;
    expect(onset).toBeGreaterThanOrEqual(f.start_s);
    expect(onset).toBeLessThanOrEqual(f.start_s + f.ramp_s + W);
    expect(signal).toBeLessThanOrEqual(f.start_s + f.ramp_s + W);
    expect(drift.shift! / base.mean).toBeLessThan(-0.4);
  });

  it('pulsation: every burst after the onset has its largest peak at the injected frequency (±1 bin) and amplitude (±10 %)', () => {
    const sc = loadScenario('pulsation');
    const f = sc.faults[0]!;
    if (f.kind !== 'pulsation') throw new Error('unexpected fault');
    const { a } = analyse('MR-1', sc, 12 * 60);
    const bursts = a.bursts.filter((b) => b.loopId === f.loopId && b.channel === 0 && b.t_s - T0_S >= f.start_s + f.ramp_s);
    expect(bursts.length).toBeGreaterThanOrEqual(3);
    for (const b of bursts) {
      const top = b.peaks[0]!;
      expect(Math.abs(top.frequency_hz - f.frequency_Hz)).toBeLessThanOrEqual(b.psd.df_hz);
      expect(Math.abs(top.amplitude / f.amplitude_Pa - 1)).toBeLessThanOrEqual(0.1);
    }
  });

  it('thermal-degradation: the faulty loop’s rate of rise departs from its healthy twin’s once the fault is in', () => {
    const sc = loadScenario('thermal-degradation');
    const f = sc.faults[0]!;
    if (f.kind !== 'thermal-degradation') throw new Error('unexpected fault');
    const seconds = 25 * 60;
    const faulty = within(analyse('MR-1', sc, seconds).a.loops[0]!.windows, 0, seconds);
    const twin = within(analyse('MR-1', { ...sc, faults: [] }, seconds).a.loops[0]!.windows, 0, seconds);
    const diff = faulty.map((w, i) => w.rateOfRise_k_s! - twin[i]!.rateOfRise_k_s!);
    const startsAt = (s: number) => faulty.findIndex((w) => w.start_s - T0_S >= s);
    const pre = diff.slice(0, startsAt(f.start_s) - 1);
    const post = diff.slice(startsAt(f.start_s + f.ramp_s));
    // before the fault the two runs are the same spacecraft, sample for sample
    expect(Math.max(...pre.map(Math.abs))).toBeLessThan(1e-9);
    // after it the electrodes lag the radiator's swing: their rate of rise differs in every window by more
    // than ten times what the thermistor noise allows a 60 s slope (0.05 K per sample: about 1.2e-4 K/s)
    expect(post.length).toBeGreaterThanOrEqual(10);
    expect(Math.min(...post.map(Math.abs))).toBeGreaterThan(1.2e-3);
    const warmer = faulty.slice(startsAt(f.start_s + f.ramp_s)).map((w, i) => w.electrodeTempMean_c! - twin[i + startsAt(f.start_s + f.ramp_s)]!.electrodeTempMean_c!);
    expect(Math.min(...warmer)).toBeGreaterThan(0.3);
  });

  it('electrode-resistance-rise: the window resistance rises by the injected factor (±10 %)', () => {
    const sc = loadScenario('electrode-resistance-rise');
    const f = sc.faults[0]!;
    if (f.kind !== 'electrode-resistance-rise') throw new Error('unexpected fault');
    const ws = analyse('MR-1', sc, 25 * 60).a.loops[0]!.windows;
    const before = within(ws, 0, f.start_s).filter((w) => w.resistance_ohm !== null);
    const after = within(ws, f.start_s + f.ramp_s, 25 * 60).filter((w) => w.resistance_ohm !== null);
    expect(before.length).toBeGreaterThanOrEqual(8);
    expect(after.length).toBeGreaterThanOrEqual(10);
    const ratio = median(after.map((w) => w.resistance_ohm!)) / median(before.map((w) => w.resistance_ohm!));
    expect(Math.abs(ratio / f.magnitude - 1)).toBeLessThanOrEqual(0.1);
  });
});
