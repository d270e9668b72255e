import { gstime, propagate, twoline2satrec } from 'satellite.js';
import { describe, expect, it } from 'vitest';
import { EARTH_DIPOLE_T_M3, R_EARTH, circularOrbitFromTle, dipoleField, gravityGradientTorque, greenwichSiderealAngle, orbitPeriod, orbitPosition, tleEpochMs } from '../../../ingest/sim/orbit';
import { LoopThermal } from '../../../ingest/sim/thermal';
import { T0, loadSheet } from './feed-helpers';

describe('geomagnetic dipole, B ≈ λ M / R³', () => {
  // M = 7.8·10¹⁵ T·m³; 400 km: 25 047 nT (λ 1, magnetic equator) to 50 095 nT (λ 2, pole) [derived].
  const r = R_EARTH + 400e3;
  it('gives 25 047 nT on the magnetic equator and 50 095 nT over the magnetic pole at 400 km', () => {
    // Find the inertial dipole axis at T0 from the field itself: over the pole B is radial.
    const ms = T0;
    let best = { lambda: 0, pos: [0, 0, 0] as number[] };
    for (let lat = -90; lat <= 90; lat += 0.5) {
      for (let lon = 0; lon < 360; lon += 1) {
        const la = (lat * Math.PI) / 180, lo = (lon * Math.PI) / 180;
        const pos = [r * Math.cos(la) * Math.cos(lo), r * Math.cos(la) * Math.sin(lo), r * Math.sin(la)];
        const B = Math.hypot(...dipoleField(pos, ms));
        if (B > best.lambda) best = { lambda: B, pos };
      }
    }
    expect(best.lambda * 1e9).toBeCloseTo(50_095, -1);
    const pole = best.pos.map((x) => x / r);
    // any direction at right angles to the pole lies on the magnetic equator
    const e = [pole[1]!, -pole[0]!, 0].map((x) => x / Math.hypot(pole[0]!, pole[1]!));
    expect(Math.hypot(...dipoleField(e.map((x) => x * r), ms)) * 1e9).toBeCloseTo(25_047, -1);
    expect(EARTH_DIPOLE_T_M3 / r ** 3 * 1e9).toBeCloseTo(25_047, -1);
  });
});

describe('gravity-gradient torque', () => {
  // Wertz & Larson, Space Mission Analysis and Design, 3rd ed., ch. 11 [published formula; table number memory]:
  // T = 3μ/(2R³)|I_z − I_y| sin 2θ; |ΔI| 4 kg·m², θ 1°, 500 km → 2.565·10⁻⁷ N·m [derived].
  it('is 2.565e-7 N·m for |ΔI| = 4 kg·m² tilted 1° at 500 km', () => {
    const th = Math.PI / 180;
    const tau = gravityGradientTorque([[10, 0, 0], [0, 6, 0], [0, 0, 10]], [0, Math.cos(th), Math.sin(th)], R_EARTH + 500e3);
    expect(Math.hypot(...tau)).toBeCloseTo(2.565e-7, 10);
    expect(Math.abs(tau[0])).toBeCloseTo(2.565e-7, 10);
  });
});

describe('orbit of the demo sheets', () => {
  it('the circular orbit stays within tens of km of SGP4 (satellite.js) over a day', () => {
    for (const key of ['MR-1', 'MR-2', 'MR-3'] as const) {
      const tle = loadSheet(key).orbit.tle;
      const orbit = circularOrbitFromTle(tle);
      const satrec = twoline2satrec(tle[0], tle[1]);
      for (let h = 0; h <= 24; h += 6) {
        const ms = T0 + h * 3_600_000;
        const p = propagate(satrec, new Date(ms));
        if (!p || typeof p.position === 'boolean') throw new Error('propagation failed');
        const ours = orbitPosition(orbit, ms).map((x) => x / 1000);
        const sgp4 = [p.position.x, p.position.y, p.position.z];
        expect(Math.abs(Math.hypot(...ours) - Math.hypot(...sgp4))).toBeLessThan(25);
      }
      expect(orbitPeriod(orbit) / 60).toBeGreaterThan(94);
      expect(orbitPeriod(orbit) / 60).toBeLessThan(97);
    }
  });

  it('reads the element-set epoch and agrees with satellite.js on the sidereal angle', () => {
    const tle = loadSheet('MR-1').orbit.tle;
    // Julian date 2440587.5 is the Unix epoch.
    const sat = twoline2satrec(tle[0], tle[1]);
    expect(Math.abs(tleEpochMs(tle[0]) - (sat.jdsatepoch - 2_440_587.5) * 86_400_000)).toBeLessThan(1);
    for (const ms of [T0, T0 + 12_345_678, Date.UTC(2000, 0, 1, 12)]) {
      const diff = Math.abs(greenwichSiderealAngle(ms) - gstime(new Date(ms)));
      expect(Math.min(diff, 2 * Math.PI - diff)).toBeLessThan(1e-6);
    }
  });
});

describe('lumped thermal node', () => {
  // C dT/dt = P − (T − T_env)/R_th, R_th 2 K/W, C 500 J/K, P 10 W, T_env = T₀ = 20 °C:
  // τ 1000 s, T(τ) 32.6424 °C, 35 °C at 1000 ln 4 = 1386.29 s [derived].
  it('reduces to the first-order model when the electrode links only to the sink', () => {
    const node = new LoopThermal({
      electrodeCapacity_J_K: 500, fluidCapacity_J_K: 1, magnetCapacity_J_K: 1,
      electrodeToFluid_K_W: 1e15, fluidToMagnet_K_W: 1, electrodeToSink_K_W: 2, fluidToSink_K_W: 1, magnetToSink_K_W: 1,
    }, 20);
    let t = 0, t35 = NaN;
    while (t < 1500) {
      node.step(0.1, 10, 0, 20, 1);
      t = Math.round((t + 0.1) * 10) / 10;
      if (Number.isNaN(t35) && node.electrode_C >= 35) t35 = t;
      if (t === 1000) expect(node.electrode_C).toBeCloseTo(32.6424, 2);
    }
    expect(t35).toBeCloseTo(1386.29, -1);
  });

  it('a sink factor k multiplies the resistance: the steady rise is k·P·R', () => {
    const node = new LoopThermal({
      electrodeCapacity_J_K: 50, fluidCapacity_J_K: 1, magnetCapacity_J_K: 1,
      electrodeToFluid_K_W: 1e15, fluidToMagnet_K_W: 1, electrodeToSink_K_W: 2, fluidToSink_K_W: 1, magnetToSink_K_W: 1,
    }, 20);
    for (let k = 0; k < 40_000; k++) node.step(0.1, 5, 0, 20, 3);
    expect(node.electrode_C).toBeCloseTo(20 + 3 * 5 * 2, 3);
  });
});
