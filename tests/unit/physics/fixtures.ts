import type { SheetLoop, SpacecraftSheet } from '../../../src/lib/spacecraft-sheet.schema';
import { GALINSTAN_DEFAULTS } from '../../../src/lib/spacecraft-sheet.schema';
import { idealTorqueConstant, idealPressureConstant, backEmf } from '../../../src/lib/physics/pump';
import { lossTorqueFunction, mhdPressureLoss } from '../../../src/lib/physics/friction';
import { momentumPerVelocity } from '../../../src/lib/physics/loop-geometry';
import { eulerRates, rk4Step } from '../../../src/lib/physics/rigid-body';
import type { SpanInput, BurstInput } from '../../../src/lib/physics/analysis';
import type { Vec3 } from '../../../src/lib/physics/vector3';

/** A desk-sized conduction-pumped loop: 5 cm radius, 10 × 5 mm channel, one 0.5 T station. */
export function deskLoop(over: Partial<SheetLoop> = {}): SheetLoop {
  return {
    id: 0,
    axis: [0, 0, 1],
    shape: { kind: 'circle', radius_m: 0.05 },
    channel: { alongField_m: 0.005, alongCurrent_m: 0.01 },
    fluid: { ...GALINSTAN_DEFAULTS },
    pumpStations: [{ field_T: 0.5, electrodeLength_m: 0.02 }],
    ratedCurrent_A: 30,
    ...over,
  };
}

/** A small spacecraft with up to three orthogonal desk loops. The orbit is not used by the physics core. */
export function testSheet(loops: SheetLoop[] = [deskLoop()]): SpacecraftSheet {
  return {
    sheetVersion: 1,
    spacecraft: { key: 'TEST-1', name: 'Test craft' },
    effectiveFrom: '2026-12-01T00:00:00Z',
    massProperties: { mass_kg: 12, inertia_kg_m2: [[0.6, 0.01, 0], [0.01, 0.7, 0.02], [0, 0.02, 0.8]] },
    orbit: {
      tle: [
        '1 00005U 58002B   00179.78495062  .00000023  00000-0  28098-4 0  4753',
        '2 00005  34.2682 348.7242 1859667 331.7664  19.3264 10.82419157413667',
      ],
    },
    loops,
  };
}

/** Deterministic pseudo-random numbers (mulberry32) and Gaussian draws (Box–Muller). */
export function rng(seed: number) {
  let a = seed >>> 0;
  const uniform = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const gauss = () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
  return { uniform, gauss };
}

/** Truth and sensor settings of a simulated span. */
export interface SimOptions {
  sheet: SpacecraftSheet;
  t0_s: number;
  duration_s: number;
  rate_hz?: number;
  /** True kT as a fraction of the ideal, per loop (at 20 °C magnet). */
  kTFactor?: number[];
  /** True loss torque as a multiple of the sheet model. */
  lossFactor?: number;
  /** Magnet temperature over time, °C. */
  magnetTemp?: (t: number) => number;
  /** Commanded current per loop over time, A. */
  current?: (loop: number, t: number) => number;
  /** Constant external torque, N·m. */
  torque?: Vec3;
  /** True electrode-circuit resistance, Ω, and thermal model. */
  resistance_ohm?: number;
  rth_k_w?: number;
  capacity_j_k?: number;
  env_c?: number;
  noise?: { current: number; voltage: number; flow: number; rate: number; pressure: number; temp: number };
  seed?: number;
}

/**
 * Integrates loop flow (ḣ = kT I − τ_loss), body rates (Euler's equations) and electrode heating with RK4
 * and samples noisy telemetry: the independent truth the analysis must recover. The pressure rise is the
 * pump's Lorentz rise less the MHD loss in its gaps, as the telemetry contract's pressure taps see it.
 */
export function simulateSpan(o: SimOptions): SpanInput {
  const rate = o.rate_hz ?? 10;
  const n = Math.round(o.duration_s * rate);
  const loops = o.sheet.loops;
  const L = loops.length;
  const noise = o.noise ?? { current: 0.02, voltage: 1e-3, flow: 1e-3, rate: 1e-6, pressure: 5, temp: 0.02 };
  const r = rng(o.seed ?? 1);
  const kT = loops.map((l, i) => idealTorqueConstant(l) * (o.kTFactor?.[i] ?? 1));
  const kp = loops.map((l, i) => idealPressureConstant(l) * (o.kTFactor?.[i] ?? 1));
  const kh = loops.map((l) => momentumPerVelocity(l));
  const loss = loops.map((l) => lossTorqueFunction(l));
  const lf = o.lossFactor ?? 1;
  const magT = o.magnetTemp ?? (() => 20);
  const cur = o.current ?? ((i: number, t: number) => 15 + 8 * Math.sin((2 * Math.PI * t) / (37 + 11 * i)) + 3 * Math.sin((2 * Math.PI * t) / 7.3));
  const tau = o.torque ?? [0, 0, 0];
  const R = o.resistance_ohm ?? 0.04, Rth = o.rth_k_w ?? 2, C = o.capacity_j_k ?? 500, Tenv = o.env_c ?? 20;
  const inertia = o.sheet.massProperties.inertia_kg_m2.map((row) => [...row]);
  const kTAt = (i: number, t: number) => kT[i]! * (1 - 0.001 * (magT(t) - 20));
  const deriv = (t: number, y: number[]): number[] => {
    const d = new Array<number>(y.length).fill(0);
    const h: Vec3 = [0, 0, 0], hd: Vec3 = [0, 0, 0];
    for (let i = 0; i < L; i++) {
      const v = y[3 + i]!;
      const I = cur(i, t);
      const hdot = kTAt(i, t) * I - lf * loss[i]!(v);
      d[3 + i] = hdot / kh[i]!;
      const ax = loops[i]!.axis;
      for (let k = 0; k < 3; k++) { h[k] = h[k]! + kh[i]! * v * ax[k]!; hd[k] = hd[k]! + hdot * ax[k]!; }
      d[3 + L + i] = (I * I * R - (y[3 + L + i]! - Tenv) / Rth) / C;
    }
    const w = eulerRates(inertia, [y[0]!, y[1]!, y[2]!], h, hd, tau);
    d[0] = w[0]; d[1] = w[1]; d[2] = w[2];
    return d;
  };
  const y0: number[] = [1e-3, -2e-3, 5e-4];
  for (let i = 0; i < L; i++) y0.push(0);
  for (let i = 0; i < L; i++) y0.push(Tenv);
  // settle the flow to the starting current
  let y = y0;
  for (let k = 0; k < 400; k++) {
    const yy = rk4Step((t, s) => deriv(t, s), 0, y, 0.05);
    y = [...y0.slice(0, 3), ...yy.slice(3)];
  }
  const t_s = new Float64Array(n);
  const att = { rate_x: new Float64Array(n), rate_y: new Float64Array(n), rate_z: new Float64Array(n), mag_x: new Float32Array(n), mag_y: new Float32Array(n), mag_z: new Float32Array(n) };
  const lp = loops.map(() => ({
    current_a: new Float32Array(n), voltage_v: new Float32Array(n), flow_m_s: new Float32Array(n), pressure_pa: new Float32Array(n),
    fluidTemp_c: new Float32Array(n), electrodeTemp_c: new Float32Array(n), magnetTemp_c: new Float32Array(n), commanded_a: new Float32Array(n),
  }));
  const sub = 4, dt = 1 / rate;
  for (let k = 0; k < n; k++) {
    const t = k * dt;
    t_s[k] = o.t0_s + t;
    att.rate_x[k] = y[0]! + noise.rate * r.gauss();
    att.rate_y[k] = y[1]! + noise.rate * r.gauss();
    att.rate_z[k] = y[2]! + noise.rate * r.gauss();
    att.mag_x[k] = 20000; att.mag_y[k] = -5000; att.mag_z[k] = 30000;
    for (let i = 0; i < L; i++) {
      const I = cur(i, t), v = y[3 + i]!, s = lp[i]!;
      s.commanded_a[k] = I;
      s.current_a[k] = I + noise.current * r.gauss();
      s.voltage_v[k] = I * R + backEmf(v, loops[i]!) + noise.voltage * r.gauss();
      s.flow_m_s[k] = v + noise.flow * r.gauss();
      // the taps report the Lorentz rise less the Hartmann loss in the pump gaps
      s.pressure_pa[k] = kp[i]! * (1 - 0.001 * (magT(t) - 20)) * I - lf * mhdPressureLoss(v, loops[i]!) + noise.pressure * r.gauss();
      s.fluidTemp_c[k] = Tenv + 0.5 * (y[3 + L + i]! - Tenv) + noise.temp * r.gauss();
      s.electrodeTemp_c[k] = y[3 + L + i]! + noise.temp * r.gauss();
      s.magnetTemp_c[k] = magT(t) + noise.temp * r.gauss();
    }
    for (let j = 0; j < sub; j++) y = rk4Step((tt, s) => deriv(tt, s), t + (j * dt) / sub, y, dt / sub);
  }
  return {
    attitude: { t_s, ...att },
    loops: loops.map((l, i) => ({ loopId: l.id, t_s: Float64Array.from(t_s), ...lp[i]! })),
    bursts: [] as BurstInput[],
  };
}
