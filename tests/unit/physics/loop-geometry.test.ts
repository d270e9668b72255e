import { describe, expect, it } from 'vitest';
import { centrelineLength, enclosedArea, loopGeometry, loopMomentum } from '../../../src/lib/physics/loop-geometry';
import { deskLoop } from './fixtures';

const ring = deskLoop({ shape: { kind: 'circle', radius_m: 0.1 }, channel: { alongField_m: 1e-3, alongCurrent_m: 1e-2 } });
const square = deskLoop({ shape: { kind: 'rounded-rectangle', width_m: 0.2, height_m: 0.2, cornerRadius_m: 0.02 }, channel: { alongField_m: 1e-3, alongCurrent_m: 1e-2 } });

/** Centreline of a rounded rectangle sampled as a polygon: an independent length and area (shoelace). */
function polygonOf(w: number, h: number, r: number, perArc = 20000) {
  const pts: [number, number][] = [];
  const corners: [number, number, number][] = [
    [w / 2 - r, h / 2 - r, 0], [-(w / 2 - r), h / 2 - r, Math.PI / 2], [-(w / 2 - r), -(h / 2 - r), Math.PI], [w / 2 - r, -(h / 2 - r), 1.5 * Math.PI],
  ];
  for (const [cx, cy, a0] of corners) for (let k = 0; k <= perArc; k++) {
    const a = a0 + (k / perArc) * (Math.PI / 2);
    pts.push([cx + r * Math.cos(a), cy + r * Math.sin(a)]);
  }
  let len = 0, area = 0;
  for (let i = 0; i < pts.length; i++) {
    const [x0, y0] = pts[i]!, [x1, y1] = pts[(i + 1) % pts.length]!;
    len += Math.hypot(x1 - x0, y1 - y0);
    area += x0 * y1 - x1 * y0;
  }
  return { len, area: area / 2 };
}

describe('loop geometry', () => {
  // Closed planar loop ∮ r × dl = 2 S n̂ (published vector calculus; derived values)
  it('ring: h = 2ρAvS equals m R v = 4.04637e-3 N·m·s', () => {
    const g = loopGeometry(ring);
    expect(g.crossSection_m2).toBeCloseTo(1e-5, 15);
    expect(loopMomentum(ring, 1)).toBeCloseTo(4.04637e-3, 8);
    expect(loopMomentum(ring, 1)).toBeCloseTo(g.fluidMass_kg * 0.1 * 1, 12);
    expect(g.leverArm_m).toBeCloseTo(0.1, 14);
  });

  it('rounded square side 0.2 m, r 0.02 m: S = 0.0396566 m², h = 5.10777e-3 N·m·s', () => {
    expect(enclosedArea(square.shape)).toBeCloseTo(0.0396566, 7);
    expect(loopMomentum(square, 1)).toBeCloseTo(5.10777e-3, 8);
  });

  it('rounded-rectangle L and S agree with a finely sampled centreline polygon (shoelace formula)', () => {
    for (const [w, h, r] of [[0.2, 0.2, 0.02], [0.3, 0.1, 0.05], [0.25, 0.15, 0], [0.2, 0.1, 0.05]] as const) {
      const poly = polygonOf(w, h, r);
      const shape = { kind: 'rounded-rectangle' as const, width_m: w, height_m: h, cornerRadius_m: r };
      expect(centrelineLength(shape)).toBeCloseTo(poly.len, 6);
      expect(enclosedArea(shape)).toBeCloseTo(poly.area, 8);
    }
  });

  it('a rounded rectangle with r = w/2 = h/2 is a circle', () => {
    const c = { kind: 'rounded-rectangle' as const, width_m: 0.2, height_m: 0.2, cornerRadius_m: 0.1 };
    expect(centrelineLength(c)).toBeCloseTo(2 * Math.PI * 0.1, 12);
    expect(enclosedArea(c)).toBeCloseTo(Math.PI * 0.01, 12);
  });

  it('hydraulic diameter 4A/P and fluid inventory', () => {
    const g = loopGeometry(deskLoop());
    expect(g.hydraulicDiameter_m).toBeCloseTo((4 * 0.005 * 0.01) / (2 * (0.005 + 0.01)), 14);
    expect(g.fluidVolume_m3).toBeCloseTo(5e-5 * 2 * Math.PI * 0.05, 14);
    expect(g.fluidMass_kg).toBeCloseTo(6440 * g.fluidVolume_m3, 12);
    expect(loopMomentum(deskLoop(), -0.5)).toBeCloseTo(-loopMomentum(deskLoop(), 0.5), 15);
  });
});
