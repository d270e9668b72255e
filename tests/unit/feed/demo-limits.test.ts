/**
 * The demo's scenarios against the demo's default limits, through the ground's own decoder and
 * analysis: MR-1 on demo.json must trip its effectiveness and pulsation limits within the first ten
 * minutes; the healthy scenario (MR-2 and MR-3 in the demo) must stay inside every caution level for
 * hours, the current inside each spacecraft's own rating-derived caution. Limit levels and persistences are those of the demo's default limit set.
 */

import { describe, expect, it } from 'vitest';
import { analyseSpan, baselineStats, detectDrift } from '../../../src/lib/physics/analysis';
import { DEFAULT_RULES, defaultRulesFor } from '../../../src/lib/limits/defaults';
import { BASELINE_WINDOWS } from '../../../src/lib/server/analysis-job';
import type { SpanAnalysis } from '../../../src/lib/physics/analysis';
import { DEFAULT_EFFECTIVENESS } from '../../../ingest/sim/spacecraft-sim';
import type { DecodedSpan } from './feed-helpers';
import { T0, generateSpan, loadScenario, loadSheet } from './feed-helpers';

const T0_S = T0 / 1000;
const LIMITS = {
  effectiveness: { caution: 0.55, warning: 0.45, persistence: 3 },
  electrodeTemp_c: 55,
  rateOfRise_k_s: 0.02,
  marginInUse_pct: 80,
  pulsationPeak_pa: { caution: 40, persistence: 2 },
};

/** The measured-current caution a loop's seeded default set gives it (from the sheet's rated current). */
function currentCaution(sheet: ReturnType<typeof loadSheet>, loopId: number): number {
  const rules = defaultRulesFor(sheet).filter((r) => r.quantity === 'measured_current_a');
  const r = rules.find((x) => x.loopId === loopId) ?? rules.find((x) => x.loopId === null)!;
  return r.cautionHigh!;
}

/** End time (s from the start) of the first run of `persistence` consecutive values below `level`, or null. */
function tripTime(points: readonly { t_s: number; value: number | null }[], level: number, persistence: number): number | null {
  let run = 0;
  for (const p of points) {
    run = p.value !== null && p.value < level ? run + 1 : 0;
    if (run >= persistence) return p.t_s - T0_S;
  }
  return null;
}

/** Largest spectral peak amplitude of a burst (0 without peaks), as the limit reads it. */
const topPeak = (b: SpanAnalysis['bursts'][number]) => b.peaks.reduce((m, p) => Math.max(m, p.amplitude), 0);

describe('demo scenario, MR-1: the faults trip their limits within the first ten minutes', () => {
  const sheet = loadSheet('MR-1');
  const sc = loadScenario('demo');
  const d = generateSpan(sheet, sc, 11 * 60);
  const a = analyseSpan(d.input, sheet, { window_s: 60 });
  const loss = sc.faults.find((f) => f.kind === 'torque-constant-loss')!;
  const pulsation = sc.faults.find((f) => f.kind === 'pulsation')!;

  it('loop 0 starts at its healthy effectiveness, clear of the limits, before the loss begins', () => {
    const first = a.loops[0]!.windows[0]!;
    expect(loss.start_s).toBeGreaterThanOrEqual(first.end_s - T0_S);
    expect(first.effectiveness! / DEFAULT_EFFECTIVENESS[0]).toBeCloseTo(1, 1);
    expect(first.effectiveness!).toBeGreaterThan(0.6);
  });

  it('effectiveness caution (0.55) trips a few minutes in, and the warning (0.45) soon after', () => {
    const points = a.loops[0]!.windows.map((w) => ({ t_s: w.end_s, value: w.effectiveness }));
    const caution = tripTime(points, LIMITS.effectiveness.caution, LIMITS.effectiveness.persistence);
    const warning = tripTime(points, LIMITS.effectiveness.warning, LIMITS.effectiveness.persistence);
    expect(caution).not.toBeNull();
    expect(caution!).toBeGreaterThanOrEqual(3 * 60);
    expect(caution!).toBeLessThanOrEqual(8 * 60);
    expect(warning).not.toBeNull();
    expect(warning!).toBeLessThanOrEqual(9 * 60);
    // the on-board pressure-per-amp monitor reports it too
    expect(d.events.some((e) => e.loopId === 0 && /pressure per amp/.test(e.text))).toBe(true);
  });

  it('the pulsation shows in two consecutive burst captures, above the 40 Pa caution, at its frequency', () => {
    if (pulsation.kind !== 'pulsation') throw new Error('unexpected fault');
    const bursts = a.bursts.filter((b) => b.loopId === 0 && b.channel === 0);
    const trip = tripTime(bursts.map((b) => ({ t_s: b.t_s, value: -topPeak(b) })), -LIMITS.pulsationPeak_pa.caution, LIMITS.pulsationPeak_pa.persistence);
    expect(trip).not.toBeNull();
    expect(trip!).toBeLessThanOrEqual(10 * 60);
    for (const b of bursts) {
      const top = [...b.peaks].sort((p, q) => q.amplitude - p.amplitude)[0]!;
      expect(Math.abs(top.frequency_hz - pulsation.frequency_Hz)).toBeLessThanOrEqual(b.psd.df_hz);
    }
  });
});

describe('healthy scenario: three simulated hours inside every caution level of the demo limits', () => {
  const check = (key: 'MR-1' | 'MR-2' | 'MR-3', d: DecodedSpan, a: SpanAnalysis) => {
    const sheet = loadSheet(key);
    const hours = 3;
    for (const l of a.loops) {
      const ws = l.windows.filter((w) => w.start_s >= T0_S && w.end_s <= T0_S + hours * 3600);
      expect(ws.length, key).toBe(hours * 60);
      const eff = ws.map((w) => w.effectiveness).filter((x): x is number => x !== null);
      expect(eff.length / ws.length, key).toBeGreaterThanOrEqual(0.95);
      expect(Math.min(...eff), key).toBeGreaterThan(LIMITS.effectiveness.caution);
      expect(Math.max(...ws.map((w) => w.electrodeTempMean_c!)), key).toBeLessThan(LIMITS.electrodeTemp_c);
      expect(Math.max(...ws.map((w) => w.rateOfRise_k_s!)), key).toBeLessThan(LIMITS.rateOfRise_k_s);
      expect(Math.max(...ws.map((w) => w.marginInUse_pct!)), key).toBeLessThan(LIMITS.marginInUse_pct);
      const bursts = a.bursts.filter((b) => b.loopId === l.loopId && b.channel === 0);
      expect(bursts.length, key).toBeGreaterThanOrEqual(30);
      expect(Math.max(...bursts.map(topPeak)), key).toBeLessThan(LIMITS.pulsationPeak_pa.caution);
      const raw = d.input.loops.find((x) => x.loopId === l.loopId)!;
      let maxI = 0, maxTe = -Infinity;
      for (let i = 0; i < raw.t_s.length; i++) {
        maxI = Math.max(maxI, Math.abs(raw.current_a[i]!));
        maxTe = Math.max(maxTe, raw.electrodeTemp_c[i]!);
      }
      expect(maxI, key).toBeLessThan(currentCaution(sheet, l.loopId));
      expect(currentCaution(sheet, l.loopId), key).toBe(sheet.loops.find((x) => x.id === l.loopId)!.ratedCurrent_A);
      expect(maxTe, key).toBeLessThan(LIMITS.electrodeTemp_c);
      // the downward drift CUSUM, formed as the analysis job forms it (on the magnet-compensated series), stays below the default caution
      const v = Float64Array.from(l.windows, (w) => w.compensatedEffectiveness ?? Number.NaN);
      const base = baselineStats(v, 0, BASELINE_WINDOWS);
      const drift = detectDrift(Float64Array.from(l.windows, (w) => w.start_s), v, base);
      const cusumCaution = DEFAULT_RULES.find((r) => r.quantity === 'drift_cusum_lo')!.cautionHigh!;
      expect(Math.max(...drift.cusum.sLo) / base.sd, key).toBeLessThan(cusumCaution);
    }
  };

  for (const key of ['MR-3', 'MR-1', 'MR-2'] as const) {
    it(`${key}`, () => {
      const sheet = loadSheet(key);
      const d = generateSpan(sheet, loadScenario('healthy'), 3 * 3600);
      expect(d.rejects).toEqual([]);
      check(key, d, analyseSpan(d.input, sheet, { window_s: 60 }));
    }, 60_000);
  }
});
