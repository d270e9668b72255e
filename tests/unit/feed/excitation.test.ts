import { fft } from 'fft-js';
import { describe, expect, it } from 'vitest';
import { EXCITATION_HARMONICS, LoopExcitation } from '../../../ingest/sim/excitation';
import { ScenarioError, parseScenario } from '../../../ingest/scenario.schema';
import { PacketStream } from '../../../ingest/generator';
import { mhdPressureLoss } from '../../../src/lib/physics/friction';
import { idealPressureConstant } from '../../../src/lib/physics/pump';
import { cucToUnixMs } from '../../../src/lib/telemetry/cuc';
import { T0, decodeChunks, loadScenario, loadSheet, ofKind, scenario } from './feed-helpers';

describe('identification dither: a multi-sine on the 2nd–4th harmonics of its period', () => {
  const ex = new LoopExcitation({ amplitude_A: 3.3, period_s: 12, shift_s: 1.7 });
  const n = 1024;
  const one = Array.from({ length: n }, (_, i) => ex.at((12 * i) / n));

  it('has only the three lines, of equal amplitude (DFT by fft-js, an independent library)', () => {
    const bins = fft(one).slice(0, n / 2);
    const mag = bins.map(([re, im]) => (2 * Math.hypot(re, im)) / n);
    const lines = [...EXCITATION_HARMONICS];
    expect(lines).toEqual([2, 3, 4]);
    for (const k of lines) expect(mag[k]! / ex.lineAmplitude_A).toBeCloseTo(1, 9);
    mag.forEach((m, k) => { if (!lines.includes(k as 2 | 3 | 4)) expect(m).toBeLessThan(1e-9); });
  });

  it('peaks at ±amplitude and averages to zero over any 60 s window (five whole periods)', () => {
    let peak = 0;
    for (let i = 0; i < 120_000; i++) peak = Math.max(peak, Math.abs(ex.at(i * 1e-4)));
    expect(peak / 3.3).toBeCloseTo(1, 4);
    expect(peak).toBeLessThanOrEqual(3.3 * (1 + 1e-9));
    for (const start of [0, 7.3, 41.05]) {
      let s = 0;
      for (let i = 0; i < 600; i++) s += ex.at(start + 0.05 + 0.1 * i);
      expect(Math.abs(s / 600)).toBeLessThan(1e-12);
    }
    expect(new LoopExcitation({ amplitude_A: 0, period_s: 12, shift_s: 0 }).at(3)).toBe(0);
  });
});

describe('excitation in scenarios', () => {
  it('is on by default at 15 % of rated current and a 12 s period', () => {
    expect(scenario().excitation).toEqual({ enabled: true, amplitude: 0.15, period_s: 12 });
    expect(scenario({ excitation: { enabled: false } }).excitation).toEqual({ enabled: false, amplitude: 0.15, period_s: 12 });
  });

  it('refuses amplitudes beyond half the rating, periods out of range and unknown keys', () => {
    const problems = (input: unknown): string[] => {
      try {
        parseScenario({ name: 'x', excitation: input });
      } catch (err) {
        expect(err).toBeInstanceOf(ScenarioError);
        return (err as ScenarioError).problems;
      }
      return [];
    };
    expect(problems({ amplitude: 0.8 })).toEqual(['excitation.amplitude: amplitude must be at most 0.5 (a fraction of the rated current)']);
    expect(problems({ period_s: 1 })).toEqual(['excitation.period_s: period_s must be at least 2']);
    expect(problems({ enabled: 'yes' })).toEqual(['excitation.enabled: excitation.enabled must be true or false']);
    expect(problems({ amplitude: 0.1, shape: 'prbs' }).some((p) => p.includes("Unrecognized key(s) in object: 'shape'"))).toBe(true);
  });

  it('moves the commanded current by the dither; switched off, a pointing loop holds a nearly constant current', () => {
    const sheet = loadSheet('MR-1');
    const run = (sc: ReturnType<typeof scenario>) => {
      const stream = new PacketStream({ sheet, scenario: sc, startMs: T0 });
      stream.advanceTo(T0 + 50_000);
      const cmd = ofKind(decodeChunks(stream.flush(), [0]), 'loop').slice(-300).map((l) => l.commandedCurrent_a);
      const m = cmd.reduce((s, x) => s + x, 0) / cmd.length;
      return Math.sqrt(cmd.reduce((s, x) => s + (x - m) ** 2, 0) / cmd.length);
    };
    const on = run(scenario({ attitude: { slewPeriod_s: 0 } }));
    const off = run(scenario({ attitude: { slewPeriod_s: 0 }, excitation: { enabled: false } }));
    expect(on).toBeGreaterThan(0.05 * sheet.loops[0]!.ratedCurrent_A);
    expect(off).toBeLessThan(0.01 * sheet.loops[0]!.ratedCurrent_A);
  });
});

describe('fast channels describe the same instant', () => {
  it('pressure rise and pump current: no lag between them (below 1 ms), the rise being η·kp·I − MHD loss', () => {
    // If the pressure were sampled δ later than the current, p + k_MHD·v − η·kp·I would follow η·kp·δ·dI/dt.
    const sheet = loadSheet('MR-1');
    const loop = sheet.loops[0]!;
    const sc = loadScenario('healthy');
    const stream = new PacketStream({ sheet, scenario: sc, startMs: T0 });
    stream.advanceTo(T0 + 600_000);
    const eta = stream.sim.trueEffectiveness(0);
    const rows = ofKind(decodeChunks(stream.flush(), [0]), 'loop');
    const kp = idealPressureConstant(loop), kMhd = mhdPressureLoss(1, loop);
    let sxy = 0, sxx = 0, srr = 0, n = 0;
    for (let i = 1; i + 1 < rows.length; i++) {
      const dt = (cucToUnixMs(rows[i + 1]!.coarse, rows[i + 1]!.fine) - cucToUnixMs(rows[i - 1]!.coarse, rows[i - 1]!.fine)) / 1000;
      const dIdt = (rows[i + 1]!.measuredCurrent_a - rows[i - 1]!.measuredCurrent_a) / dt;
      const r = rows[i]!.pressureRise_pa + kMhd * rows[i]!.flowVelocity_m_s - eta * kp * rows[i]!.measuredCurrent_a;
      sxy += r * dIdt; sxx += dIdt * dIdt; srr += r * r; n++;
    }
    const lag = sxy / sxx / (eta * kp);
    expect(Math.abs(lag)).toBeLessThan(1e-3);
    // and the residual is the sensor noise (3 Pa) plus the current noise through kp (0.01 A)
    expect(Math.sqrt(srr / n)).toBeLessThan(4);
  });
});
