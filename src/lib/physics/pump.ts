import type { SheetLoop } from '../spacecraft-sheet.schema';
import { loopGeometry } from './loop-geometry';

/*
 * DC conduction (Lorentz-force) pump stations. Current I crosses the channel along `alongCurrent_m`
 * (a), the magnet field B lies along `alongField_m` (b). The force density J×B with J = I/(b·l)
 * acting over the electrode length l gives Δp = I·B/b per station. Stations of one loop are taken
 * to be wired in series, so each carries the same current and their pressure rises and back-EMFs add.
 */

/** Ideal pressure rise of all stations, Pa: Δp = Σ I·B/b (J·l·B of the textbook electromagnetic pump). */
export function idealPumpPressure(current_a: number, loop: SheetLoop): number {
  return current_a * idealPressureConstant(loop);
}

/** Ideal pump-pressure constant Δp/I, Pa/A: Σ B/b over stations. */
export function idealPressureConstant(loop: SheetLoop): number {
  let k = 0;
  for (const st of loop.pumpStations) k += st.field_T / loop.channel.alongField_m;
  return k;
}

/** Ideal torque constant, N·m/A: (Δp/I)·A·(2S/L); for a circle with one station B·a·R. */
export function idealTorqueConstant(loop: SheetLoop): number {
  const g = loopGeometry(loop);
  return idealPressureConstant(loop) * g.crossSection_m2 * g.leverArm_m;
}

/** Back-EMF of the moving fluid, V: E = Σ v·B·a over stations (motional EMF, signed like v). */
export function backEmf(velocity_m_s: number, loop: SheetLoop): number {
  let e = 0;
  for (const st of loop.pumpStations) e += velocity_m_s * st.field_T * loop.channel.alongCurrent_m;
  return e;
}

/** Electrical resistance of the fluid between the electrodes of all stations, Ω: Σ a/(σ·b·l). */
export function fluidGapResistance(loop: SheetLoop): number {
  let r = 0;
  for (const st of loop.pumpStations) {
    r += loop.channel.alongCurrent_m / (loop.fluid.conductivity_S_m * loop.channel.alongField_m * st.electrodeLength_m);
  }
  return r;
}
