import { describe, expect, it } from 'vitest';
import { fitThermalModel, meanJoulePower, thermalResponse, timeToLimit, windowResistance, predictNextTemperature } from '../../../src/lib/physics/heating';
import { backEmf } from '../../../src/lib/physics/pump';
import { deskLoop, rng } from './fixtures';

// First-order model C dT/dt = P − (T − T_env)/R_th: R_th 2 K/W, C 500 J/K, P 10 W, T_env = T₀ = 20 °C →
// τ 1000 s, T∞ 40 °C, T(τ) 32.6424 °C, time to 35 °C = 1000 ln 4 = 1386.29 s (derived)
const model = { rth_k_w: 2, capacity_j_k: 500, tau_s: 1000, env_c: 20 };

describe('thermal model', () => {
  it('analytic response and time to a limit', () => {
    expect(thermalResponse(model, 10, 20, 1000)).toBeCloseTo(32.6424, 4);
    expect(thermalResponse(model, 10, 20, 1e7)).toBeCloseTo(40, 9);
    expect(timeToLimit(model, 10, 20, 35)).toBeCloseTo(1386.29, 2);
    expect(timeToLimit(model, 10, 20, 40)).toBeNull();
    expect(timeToLimit(model, 10, 36, 35)).toBe(0);
  });

  it('fit of the discretised model recovers R_th and τ from a history with varying power', () => {
    const r = rng(12);
    const dt = 60, n = 400;
    const T = new Float64Array(n), P = new Float64Array(n);
    T[0] = 20;
    for (let k = 0; k < n; k++) {
      P[k] = 10 + 6 * Math.sin(k / 9) + (k % 50 < 25 ? 3 : -3);
      if (k + 1 < n) T[k + 1] = predictNextTemperature(model, T[k]!, P[k]!, dt);
    }
    const fit = fitThermalModel(T, P, dt)!;
    expect(fit.rth_k_w).toBeCloseTo(2, 8);
    expect(fit.tau_s).toBeCloseTo(1000, 5);
    expect(fit.capacity_j_k).toBeCloseTo(500, 5);
    expect(fit.env_c).toBeCloseTo(20, 7);
    const noisy = T.map((t) => t + 0.005 * r.gauss());
    const f2 = fitThermalModel(noisy, P, dt)!;
    expect(Math.abs(f2.rth_k_w / 2 - 1)).toBeLessThan(0.05);
    expect(Math.abs(f2.tau_s / 1000 - 1)).toBeLessThan(0.1);
  });

  it('refuses a history without power variation', () => {
    const T = Float64Array.from({ length: 50 }, (_, k) => thermalResponse(model, 10, 20, 60 * k));
    expect(fitThermalModel(T, new Float64Array(50).fill(10), 60)).toBeNull();
  });
});

describe('electrode resistance', () => {
  it('R = Σ(V − E)I/ΣI² removes the back-EMF; Joule power is I²R', () => {
    const loop = deskLoop();
    const r = rng(13);
    const I = Float64Array.from({ length: 600 }, () => 20 + 4 * r.gauss());
    const v = Float64Array.from(I, (c) => 0.03 * c);
    const V = Float64Array.from(I, (c, i) => 0.041 * c + backEmf(v[i]!, loop) + 1e-3 * r.gauss());
    expect(windowResistance(I, V, v, loop)!).toBeCloseTo(0.041, 4);
    const p = meanJoulePower(I, V, v, loop);
    const ii = I.reduce((s, c) => s + c * c, 0) / I.length;
    expect(p / (ii * 0.041)).toBeCloseTo(1, 3);
    expect(windowResistance(I.map(() => 0.01), V, v, loop, 0, 600, 1)).toBeNull();
  });
});
