import type { LoopShape, SheetLoop } from '../spacecraft-sheet.schema';

/** Geometry of one loop, derived from its sheet entry (all SI). */
export interface LoopGeometry {
  /** Centreline length L, m. */
  centrelineLength_m: number;
  /** Area S enclosed by the centreline, m². */
  enclosedArea_m2: number;
  /** Channel cross-section A = alongField × alongCurrent, m². */
  crossSection_m2: number;
  /** Hydraulic diameter D_h = 4A / wetted perimeter, m. */
  hydraulicDiameter_m: number;
  /** Effective lever arm 2S/L, m (equals R for a circle). */
  leverArm_m: number;
  /** Fluid mass ρ·A·L, kg. */
  fluidMass_kg: number;
  /** Fluid volume A·L, m³. */
  fluidVolume_m3: number;
}

/** Centreline length of a loop shape; rounded rectangle L = 2(w + h) − (8 − 2π) r. */
export function centrelineLength(shape: LoopShape): number {
  if (shape.kind === 'circle') return 2 * Math.PI * shape.radius_m;
  const r = shape.cornerRadius_m;
  return 2 * (shape.width_m + shape.height_m) - (8 - 2 * Math.PI) * r;
}

/** Area enclosed by the centreline; rounded rectangle S = w·h − (4 − π) r². */
export function enclosedArea(shape: LoopShape): number {
  if (shape.kind === 'circle') return Math.PI * shape.radius_m ** 2;
  const r = shape.cornerRadius_m;
  return shape.width_m * shape.height_m - (4 - Math.PI) * r * r;
}

/** Derived geometry of a loop: lengths, areas, hydraulic diameter, lever arm and fluid inventory. */
export function loopGeometry(loop: SheetLoop): LoopGeometry {
  const a = loop.channel.alongCurrent_m;
  const b = loop.channel.alongField_m;
  const L = centrelineLength(loop.shape);
  const S = enclosedArea(loop.shape);
  const A = a * b;
  const volume = A * L;
  return {
    centrelineLength_m: L,
    enclosedArea_m2: S,
    crossSection_m2: A,
    hydraulicDiameter_m: (2 * a * b) / (a + b),
    leverArm_m: (2 * S) / L,
    fluidMass_kg: loop.fluid.density_kg_m3 * volume,
    fluidVolume_m3: volume,
  };
}

/**
 * Fluid angular momentum along the loop axis, N·m·s: h = 2ρAvS, from ∮ r × dl = 2S n̂
 * (Stokes' theorem for a closed planar curve); for a circle this is h = m R v.
 */
export function loopMomentum(loop: SheetLoop, velocity_m_s: number): number {
  const S = enclosedArea(loop.shape);
  const A = loop.channel.alongCurrent_m * loop.channel.alongField_m;
  return 2 * loop.fluid.density_kg_m3 * A * velocity_m_s * S;
}

/** Momentum per unit velocity, N·m·s per m/s: dh/dv = 2ρAS. */
export function momentumPerVelocity(loop: SheetLoop): number {
  return loopMomentum(loop, 1);
}
