import type { SheetLoop } from '../spacecraft-sheet.schema';
import { loopGeometry } from './loop-geometry';

/** Fluid properties a friction computation needs. */
export interface FluidProperties {
  density_kg_m3: number;
  viscosity_Pa_s: number;
}

/**
 * Reynolds number to laminar–turbulent switch. The switch is abrupt: the Darcy factor jumps up
 * (for a round pipe from 64/2300 = 0.0278 to Blasius 0.0457), with Blasius extrapolated below its
 * stated range (4·10³ < Re < 10⁵). Loss therefore never falls as |v| rises, which keeps the
 * steady-flow solve (bisection) well posed; a real loop in 2300–4000 lies somewhere between.
 */
export const LAMINAR_LIMIT_RE = 2300;

/** Reynolds number Re = ρ|v|D_h/μ. */
export function reynoldsNumber(v: number, d_h: number, fluid: FluidProperties): number {
  return (fluid.density_kg_m3 * Math.abs(v) * d_h) / fluid.viscosity_Pa_s;
}

/**
 * Laminar Darcy f·Re of a rectangular duct of side ratio α = short/long (Shah & London, 1978):
 * 4 × 24(1 − 1.3553α + 1.9467α² − 1.7012α³ + 0.9564α⁴ − 0.2537α⁵).
 */
export function rectangularDuctDarcyFRe(alpha: number): number {
  const a = Math.min(1, Math.max(0, alpha));
  return 96 * (1 - 1.3553 * a + 1.9467 * a ** 2 - 1.7012 * a ** 3 + 0.9564 * a ** 4 - 0.2537 * a ** 5);
}

/**
 * Darcy friction factor of a smooth duct: laminar C/Re below Re 2300 (C = 64 for a round pipe, or the
 * Shah & London 1978 value for a rectangular duct when `aspectRatio` is given), Blasius (1913)
 * f = 0.3164 Re^−0.25 above. See LAMINAR_LIMIT_RE for the transition choice.
 */
export function darcyFrictionFactor(re: number, aspectRatio?: number): number {
  if (!(re > 0)) return Number.POSITIVE_INFINITY;
  if (re < LAMINAR_LIMIT_RE) return (aspectRatio === undefined ? 64 : rectangularDuctDarcyFRe(aspectRatio)) / re;
  return 0.3164 * re ** -0.25;
}

function aspectRatioOf(loop: SheetLoop): number {
  const { alongField_m: b, alongCurrent_m: a } = loop.channel;
  return Math.min(a, b) / Math.max(a, b);
}

/** Laminar pressure gradient per unit velocity of the loop's duct, Pa/m per m/s: C·μ/(2 D_h²). */
function laminarGradientPerVelocity(loop: SheetLoop, d_h: number): number {
  return (rectangularDuctDarcyFRe(aspectRatioOf(loop)) * loop.fluid.viscosity_Pa_s) / (2 * d_h * d_h);
}

/**
 * Friction loss round the whole centreline, Pa, signed like v (Darcy–Weisbach:
 * Δp = f (L/D_h) ρ v|v| / 2). The laminar branch is written as C μ L v / (2 D_h²) so v = 0 gives 0.
 */
export function frictionPressureLoss(v: number, loop: SheetLoop): number {
  if (v === 0) return 0;
  const g = loopGeometry(loop);
  const re = reynoldsNumber(v, g.hydraulicDiameter_m, loop.fluid);
  if (re < LAMINAR_LIMIT_RE) return laminarGradientPerVelocity(loop, g.hydraulicDiameter_m) * g.centrelineLength_m * v;
  const f = darcyFrictionFactor(re);
  return ((f * g.centrelineLength_m) / g.hydraulicDiameter_m) * (loop.fluid.density_kg_m3 * v * Math.abs(v)) / 2;
}

/**
 * Hartmann number of one pump station, Ha = B·(b/2)·√(σ/μ), with b = alongField_m the gap between
 * the walls normal to the field (half-gap as length scale, as in plane Hartmann flow).
 */
export function hartmannNumber(loop: SheetLoop, station: { field_T: number }): number {
  return station.field_T * (loop.channel.alongField_m / 2) * Math.sqrt(loop.fluid.conductivity_S_m / loop.fluid.viscosity_Pa_s);
}

/**
 * Plane Hartmann flow: pressure gradient relative to Poiseuille flow at equal mean velocity,
 * Ha² tanh(Ha) / (3 (Ha − tanh Ha)) (Hartmann, 1937). Series near 0, where it tends to 1.
 */
export function hartmannPressureRatio(ha: number): number {
  const h = Math.abs(ha);
  if (h < 1e-3) return 1 + (h * h) / 15; // Taylor expansion about Ha = 0 (cancellation otherwise)
  const t = Math.tanh(h);
  return (h * h * t) / (3 * (h - t));
}

/**
 * Extra (magnetohydrodynamic) loss in the pump gaps, Pa, signed like v: over each station's electrode
 * length l the laminar duct gradient is multiplied by the Hartmann ratio; the excess over the
 * friction already counted is Σ l·(ratio(Ha) − 1)·C μ v/(2 D_h²). Linear in v because the field
 * keeps the flow in the gap laminar at the Hartmann numbers of these pumps (Ha ≫ 1).
 */
export function mhdPressureLoss(v: number, loop: SheetLoop): number {
  if (v === 0) return 0;
  const g = loopGeometry(loop);
  const perVelocity = laminarGradientPerVelocity(loop, g.hydraulicDiameter_m);
  let dp = 0;
  for (const st of loop.pumpStations) dp += st.electrodeLength_m * (hartmannPressureRatio(hartmannNumber(loop, st)) - 1) * perVelocity * v;
  return dp;
}

/** Total hydraulic loss (friction + MHD), Pa, signed like v. */
export function totalPressureLoss(v: number, loop: SheetLoop): number {
  return frictionPressureLoss(v, loop) + mhdPressureLoss(v, loop);
}

/** Loss torque on the fluid, N·m, signed like v: (friction + MHD) × A × 2S/L. */
export function lossTorque(v: number, loop: SheetLoop): number {
  const g = loopGeometry(loop);
  return totalPressureLoss(v, loop) * g.crossSection_m2 * g.leverArm_m;
}

/**
 * The loss torque v ↦ (Δp_f(v) + Δp_MHD(v))·A·2S/L of one loop with its geometry worked out once, for
 * evaluating over long series; same result as lossTorque.
 */
export function lossTorqueFunction(loop: SheetLoop): (v: number) => number {
  const g = loopGeometry(loop);
  const arm = g.crossSection_m2 * g.leverArm_m;
  const perVelocity = laminarGradientPerVelocity(loop, g.hydraulicDiameter_m);
  let mhdLength = 0;
  for (const st of loop.pumpStations) mhdLength += st.electrodeLength_m * (hartmannPressureRatio(hartmannNumber(loop, st)) - 1);
  const laminarK = perVelocity * (g.centrelineLength_m + mhdLength) * arm;
  const mhdK = perVelocity * mhdLength * arm;
  const reK = (loop.fluid.density_kg_m3 * g.hydraulicDiameter_m) / loop.fluid.viscosity_Pa_s;
  const turbK = ((g.centrelineLength_m / g.hydraulicDiameter_m) * loop.fluid.density_kg_m3 * 0.5 * 0.3164) * arm;
  return (v: number) => {
    const re = reK * Math.abs(v);
    if (re < LAMINAR_LIMIT_RE) return laminarK * v;
    return (turbK / Math.sqrt(Math.sqrt(re))) * v * Math.abs(v) + mhdK * v; // Re^−0.25 without pow
  };
}
