import { beforeAll, describe, expect, it } from 'vitest';
import { analyseSpan, baselineStats, detectDrift, type SpanAnalysis, type SpanInput } from '../../../src/lib/physics/analysis';
import { meanJoulePower, timeToLimit, windowResistance } from '../../../src/lib/physics/heating';
import { lineFit } from '../../../src/lib/physics/least-squares';
import { momentumCapacity } from '../../../src/lib/physics/momentum';
import { idealTorqueConstant } from '../../../src/lib/physics/pump';
import { deskLoop, rng, simulateSpan, testSheet } from './fixtures';

const sheet = testSheet([deskLoop(), deskLoop({ id: 1, axis: [0.6, 0.8, 0] })]);
const T0 = 1_800_000_030; // not on a window boundary
const TORQUE: [number, number, number] = [4e-6, -2e-6, 6e-6];
const truth = [0.8, 0.9];
let input: SpanInput;
let out: SpanAnalysis;

function burst(loopId: number, t_s: number, lines: [number, number][], seed: number) {
  const r = rng(seed);
  const values = new Float32Array(1024);
  for (let i = 0; i < 1024; i++) {
    let v = 1800 + 5 * r.gauss();
    for (const [f, a] of lines) v += a * Math.sin((2 * Math.PI * f * i) / 400);
    values[i] = v;
  }
  return { loopId, t_s, sampleRate_hz: 400, channel: 0 as const, values };
}

beforeAll(() => {
  input = simulateSpan({
    sheet, t0_s: T0, duration_s: 3 * 3600, kTFactor: truth, torque: TORQUE,
    magnetTemp: (t) => 20 + t / 600,
    current: (i, t) => 14 + 8 * Math.sin((2 * Math.PI * t) / 1500 + i) + 4 * Math.sin((2 * Math.PI * t) / (37 + 11 * i)) + 2 * Math.sin((2 * Math.PI * t) / 7.3),
  });
  input.bursts = [burst(0, T0 + 100, [[50, 40]], 1), burst(0, T0 + 400, [[50, 40], [137, 20]], 2), burst(1, T0 + 100, [[60, 10]], 3)];
  out = analyseSpan(input, sheet);
});

describe('analyseSpan on a simulated span (truth from an RK4 integration of the loop and body equations)', () => {
  it('aligns windows to multiples of the window length', () => {
    expect(out.start_s % 60).toBe(0);
    expect(out.start_s).toBeLessThanOrEqual(T0);
    for (const l of out.loops) for (const w of l.windows) { expect(w.start_s % 60).toBe(0); expect(w.end_s - w.start_s).toBe(60); }
    expect(out.body.length).toBe(out.loops[0]!.windows.length);
  });

  it('recovers the true torque-constant effectiveness, magnet-compensated, within its standard error', () => {
    out.loops.forEach((l, i) => {
      expect(l.idealTorqueConstant_Nm_per_a).toBeCloseTo(idealTorqueConstant(sheet.loops[i]!), 15);
      const rows = l.windows.filter((w) => w.compensatedEffectiveness !== null);
      expect(rows.length).toBeGreaterThan(150);
      const z = rows.map((w) => (w.compensatedEffectiveness! - truth[i]!) / w.effectivenessStdErr!);
      const within2 = z.filter((x) => Math.abs(x) <= 2).length / z.length;
      expect(within2).toBeGreaterThan(0.8);
      const mean = rows.reduce((s, w) => s + w.compensatedEffectiveness!, 0) / rows.length;
      expect(Math.abs(mean / truth[i]! - 1)).toBeLessThan(0.005);
      // uncompensated effectiveness falls as the magnet warms (0.1 %/K)
      const late = rows[rows.length - 1]!;
      expect(late.effectiveness!).toBeLessThan(late.compensatedEffectiveness!);
      const pe = l.windows.filter((w) => w.pressureEffectiveness !== null);
      for (const w of pe) expect(Math.abs(w.pressureEffectiveness! / (truth[i]! * (1 - 0.001 * (w.magnetTempMean_c! - 20))) - 1)).toBeLessThan(0.01);
    });
  });

  it('window sums agree with the standalone heating and line-fit functions', () => {
    const L = input.loops[0]!, loop = sheet.loops[0]!;
    const w = out.loops[0]!.windows[7]!;
    let a = 0;
    while (L.t_s[a]! < w.start_s) a++;
    let b = a;
    while (b < L.t_s.length && L.t_s[b]! < w.end_s) b++;
    expect(w.samples).toBe(b - a);
    expect(w.resistance_ohm!).toBeCloseTo(windowResistance(L.current_a, L.voltage_v, L.flow_m_s, loop, a, b)!, 10);
    expect(w.resistance_ohm!).toBeCloseTo(0.04, 4);
    expect(w.joulePower_w!).toBeCloseTo(meanJoulePower(L.current_a, L.voltage_v, L.flow_m_s, loop, a, b), 8);
    expect(w.rateOfRise_k_s!).toBeCloseTo(lineFit(L.t_s, L.electrodeTemp_c, a, b)!.slope, 9);
    expect(w.marginInUse_pct!).toBeCloseTo((100 * w.momentumAbsMean_Nms!) / momentumCapacity(loop), 10);
  });

  it('fits the electrode thermal model (true R_th 2 K/W, τ 1000 s, 20 °C) and forecasts consistently', () => {
    for (const l of out.loops) {
      const m = l.thermalModel!;
      expect(Math.abs(m.rth_k_w / 2 - 1)).toBeLessThan(0.03);
      expect(Math.abs(m.tau_s / 1000 - 1)).toBeLessThan(0.05);
      expect(m.env_c).toBeCloseTo(20, 0);
      const res = l.windows.map((w) => w.thermalResidual_k).filter((x): x is number => x !== null);
      expect(Math.sqrt(res.reduce((s, x) => s + x * x, 0) / res.length)).toBeLessThan(0.1);
      const w = l.windows[100]!;
      expect(w.timeToTempLimit_s).toEqual(timeToLimit(m, w.joulePower_w!, w.electrodeTempMean_c!, 70));
    }
    const hot = analyseSpan(input, sheet, { electrodeTempLimit_c: 25 });
    const rows = hot.loops[0]!.windows;
    expect(rows.some((w) => w.timeToTempLimit_s === 0)).toBe(true);
    expect(rows.some((w) => w.timeToTempLimit_s !== null && w.timeToTempLimit_s > 0)).toBe(true);
    expect(hot.loops[0]!.resistanceTrend!.slope_ohm_per_s).toBeCloseTo(0, 8);
    expect(hot.loops[0]!.resistanceTrend!.atStart_ohm).toBeCloseTo(0.04, 4);
  });

  it('momentum ledger: τ_body + Σḣ recovers the applied external torque', () => {
    let inside = 0;
    for (const b of out.body) {
      for (let k = 0; k < 3; k++) {
        expect(Math.abs(b.ledgerResidual_Nm![k]! - TORQUE[k]!)).toBeLessThan(1e-6 + 6 * b.ledgerStdErr_Nm![k]!);
        if (Math.abs(b.ledgerResidual_Nm![k]! - TORQUE[k]!) <= 2 * b.ledgerStdErr_Nm![k]!) inside++;
      }
      const s = b.systemMomentum_Nms!;
      expect(b.systemMomentumMagnitude_Nms!).toBeCloseTo(Math.hypot(s[0], s[1], s[2]), 15);
      expect(b.magField_nT!).toBeCloseTo(Math.hypot(20000, 5000, 30000), 0);
    }
    expect(inside / (3 * out.body.length)).toBeGreaterThan(0.8);
    // in the body frame the system momentum obeys dH/dt = τ_ext − ω × H (Euler; Markley & Crassidis 2014, ch. 3):
    // checked on 6 s windows over the first half hour, so that window means stand for instantaneous values
    const fine = analyseSpan(input, sheet, { window_s: 6 }).body;
    let worst = 0;
    for (let j = 2; j < 300; j += 3) {
      const a = fine[j - 1]!, b = fine[j + 1]!, c = fine[j]!;
      const H = c.systemMomentum_Nms!, w = c.rateMean_rad_s!;
      const wxH = [w[1] * H[2] - w[2] * H[1], w[2] * H[0] - w[0] * H[2], w[0] * H[1] - w[1] * H[0]];
      for (let k = 0; k < 3; k++) {
        const dHdt = (b.systemMomentum_Nms![k]! - a.systemMomentum_Nms![k]!) / (b.start_s - a.start_s);
        worst = Math.max(worst, Math.abs(dHdt - (TORQUE[k]! - wxH[k]!)));
      }
    }
    expect(worst).toBeLessThan(1e-6);
  });

  it('efficiency of the desk loop is a few tenths of a mN·m per watt (common practice, no published source)', () => {
    const rows = out.loops[0]!.windows.filter((w) => w.currentMean_a! > 20 && w.currentMean_a! < 24);
    expect(rows.length).toBeGreaterThan(3);
    for (const w of rows) {
      expect(w.torquePerWatt_Nm_per_w!).toBeGreaterThan(0.15e-3);
      expect(w.torquePerWatt_Nm_per_w!).toBeLessThan(0.4e-3);
      expect(w.momentumPerWatt_Nms_per_w!).toBeCloseTo(w.momentumAbsMean_Nms! / w.electricalPower_w!, 12);
    }
  });

  it('pulsation: peaks per burst, comparison with the first burst of the loop channel, waterfalls', () => {
    expect(out.bursts).toHaveLength(3);
    const [b0, b1] = out.bursts.filter((b) => b.loopId === 0);
    expect(Math.abs(b0!.peaks[0]!.frequency_hz - 50)).toBeLessThanOrEqual(b0!.psd.df_hz);
    expect(Math.abs(b0!.peaks[0]!.bandAmplitude / 40 - 1)).toBeLessThan(0.02);
    expect(b0!.comparison).toBeNull();
    expect(b1!.comparison!.baseline).toBe('first-in-span');
    expect(b1!.comparison!.newPeaks).toHaveLength(1);
    expect(Math.abs(b1!.comparison!.newPeaks[0]!.frequency_hz - 137)).toBeLessThanOrEqual(b1!.psd.df_hz);
    expect(out.waterfalls.map((w) => [w.loopId, w.channel, w.waterfall.rows])).toEqual([[0, 0, 2], [1, 0, 1]]);
    const supplied = analyseSpan(input, sheet, { pulsationBaselines: [{ loopId: 0, channel: 0, psd: b1!.psd }] });
    expect(supplied.bursts.find((b) => b.loopId === 0)!.comparison!.baseline).toBe('supplied');
  });

  it('drift helpers work on the stored effectiveness series', () => {
    const rows = out.loops[1]!.windows.filter((w) => w.compensatedEffectiveness !== null);
    const t = rows.map((w) => w.start_s), e = rows.map((w) => w.compensatedEffectiveness!);
    const stepped = e.map((x, i) => (i >= 120 ? x - 0.03 : x));
    const base = baselineStats(stepped, 0, 100);
    expect(detectDrift(t, e, baselineStats(e, 0, 100)).detected).toBe(false);
    const rep = detectDrift(t, stepped, base);
    expect(rep.detected).toBe(true);
    expect(rep.direction).toBe('down');
    expect(rep.onsetTime_s!).toBeGreaterThanOrEqual(t[110]!);
    expect(rep.onsetTime_s!).toBeLessThanOrEqual(t[121]!);
  });

  it('a non-finite sample drops out of its own channel only', () => {
    const L = input.loops[0]!;
    const mag = Float32Array.from(L.magnetTemp_c);
    const w = out.loops[0]!.windows[5]!;
    let a = 0;
    while (L.t_s[a]! < w.start_s) a++;
    mag[a + 3] = Number.NaN;
    const res = analyseSpan({ ...input, loops: [{ ...L, magnetTemp_c: mag }] }, sheet).loops[0]!.windows[5]!;
    let s = 0;
    for (let i = a; i < a + w.samples; i++) if (i !== a + 3) s += mag[i]!;
    expect(res.magnetTempMean_c!).toBeCloseTo(s / (w.samples - 1), 6);
    expect(res.currentMean_a).toBe(w.currentMean_a);
    expect(res.kT_Nm_per_a).toBe(w.kT_Nm_per_a);
  });

  it('copes with a gap, an unknown loop and an empty attitude stream', () => {
    const cut = (a: Float64Array | Float32Array) => {
      const out = new (a.constructor as Float64ArrayConstructor)(a.length - 3000);
      out.set(a.subarray(0, 20000)); out.set(a.subarray(23000), 20000);
      return out;
    };
    const L = input.loops[0]!;
    const gapped = {
      ...L, t_s: cut(L.t_s), current_a: cut(L.current_a), voltage_v: cut(L.voltage_v), flow_m_s: cut(L.flow_m_s), pressure_pa: cut(L.pressure_pa),
      fluidTemp_c: cut(L.fluidTemp_c), electrodeTemp_c: cut(L.electrodeTemp_c), magnetTemp_c: cut(L.magnetTemp_c), commanded_a: cut(L.commanded_a),
    };
    const empty = new Float64Array(0);
    const res = analyseSpan(
      { attitude: { t_s: empty, rate_x: empty, rate_y: empty, rate_z: empty, mag_x: empty, mag_y: empty, mag_z: empty }, loops: [gapped, { ...L, loopId: 3 }], bursts: [] },
      sheet,
    );
    expect(res.skippedLoopIds).toEqual([3]);
    expect(res.body).toEqual([]);
    const rows = res.loops[0]!.windows;
    expect(rows.length).toBe(out.loops[0]!.windows.length - 4);
    for (const w of rows) for (const v of Object.values(w)) expect(Number.isNaN(v)).toBe(false);
    expect(res.loops[0]!.thermalModel).not.toBeNull();
  });
});
