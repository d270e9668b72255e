import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { symmetricEigenvalues3 } from '../../src/lib/physics/eigen3';
import { sheetIssuesByPath, spacecraftSheetSchema } from '../../src/lib/spacecraft-sheet.schema';

describe('symmetricEigenvalues3 (Smith 1961 closed form)', () => {
  it('diagonal matrix gives its diagonal sorted', () => {
    expect(symmetricEigenvalues3([[3, 0, 0], [0, 1, 0], [0, 0, 2]])).toEqual([1, 2, 3]);
  });
  it('matches the characteristic polynomial of a full matrix', () => {
    const m = [[4, 1, 0.5], [1, 3, 0.2], [0.5, 0.2, 2]];
    const ev = symmetricEigenvalues3(m);
    // trace and determinant are invariants (linear algebra identity)
    expect(ev[0] + ev[1] + ev[2]).toBeCloseTo(9, 12);
    const det = 4 * (3 * 2 - 0.04) - 1 * (1 * 2 - 0.2 * 0.5) + 0.5 * (1 * 0.2 - 3 * 0.5);
    expect(ev[0] * ev[1] * ev[2]).toBeCloseTo(det, 10);
  });
});

// The demo sheets: MR-1 has one circular loop, MR-2 a rounded rectangle, MR-3 three loops.
const demo = (key: 'MR-1' | 'MR-2' | 'MR-3') => JSON.parse(fs.readFileSync(`ingest/fleet/${key}.json`, 'utf8'));

/** Field errors of a sheet, keyed by JSON path; {} when it is valid. */
function errors(sheet: unknown): Record<string, string[]> {
  const r = spacecraftSheetSchema.safeParse(sheet);
  return r.success ? {} : sheetIssuesByPath(r.error);
}

describe('spacecraft sheet schema', () => {
  it('accepts the three demo sheets', () => {
    for (const key of ['MR-1', 'MR-2', 'MR-3'] as const) expect(errors(demo(key))).toEqual({});
  });

  it('refuses a corner radius of 0, below 0 or above half the smaller side', () => {
    for (const r of [0, -0.01]) {
      const s = demo('MR-2');
      s.loops[0].shape.cornerRadius_m = r;
      expect(errors(s)['loops[0].shape.cornerRadius_m']?.[0]).toMatch(/greater than 0/);
    }
    const s = demo('MR-2'); // 0.24 m × 0.16 m: at most 0.08 m
    s.loops[0].shape.cornerRadius_m = 0.0801;
    expect(errors(s)['loops[0].shape.cornerRadius_m']?.[0]).toMatch(/at most half the smaller/);
    s.loops[0].shape.cornerRadius_m = 0.08;
    expect(errors(s)).toEqual({});
  });

  it('refuses a loop id that appears twice, naming the second one', () => {
    const s = demo('MR-3');
    s.loops[2].id = s.loops[0].id;
    expect(errors(s)).toEqual({ 'loops[2].id': [`loop id ${s.loops[0].id} appears twice`] });
  });

  it('needs one to four loops', () => {
    const none = demo('MR-1');
    none.loops = [];
    expect(errors(none).loops?.[0]).toMatch(/one to four loops/);
    const five = demo('MR-1');
    five.loops = [0, 1, 2, 3, 3].map((id) => ({ ...five.loops[0], id }));
    expect(errors(five).loops?.[0]).toMatch(/one to four loops/);
    const four = demo('MR-1');
    four.loops = [0, 1, 2, 3].map((id) => ({ ...four.loops[0], id }));
    expect(errors(four)).toEqual({});
  });

  it('checks the modulo-10 checksum of each TLE line', () => {
    // The element set of the space station used as the worked example of the two-line format in
    // many references (e.g. the English Wikipedia article "Two-line element set"; from memory):
    // both checksum digits are 7.
    const iss = [
      '1 25544U 98067A   08264.51782528 -.00002182  00000-0 -11606-4 0  2927',
      '2 25544  51.6416 247.4627 0006703 130.5360 325.0288 15.72125391563537',
    ];
    const s = demo('MR-1');
    s.orbit.tle = iss;
    expect(errors(s)).toEqual({});
    s.orbit.tle = [iss[0]!.slice(0, 68) + '8', iss[1]];
    expect(errors(s)).toEqual({ 'orbit.tle[0]': ['TLE line 1 checksum is wrong (expected 7)'] });
    s.orbit.tle = [iss[0], iss[1]!.slice(0, 68) + '0'];
    expect(errors(s)).toEqual({ 'orbit.tle[1]': ['TLE line 2 checksum is wrong (expected 7)'] });
    s.orbit.tle = [iss[1], iss[0]];
    expect(errors(s)['orbit.tle[0]']?.[0]).toMatch(/must start with "1 "/);
  });

  it('accepts sheetVersion 1 only', () => {
    for (const v of [2, 0, '1', undefined]) {
      const s = demo('MR-1');
      s.sheetVersion = v;
      expect(errors(s)).toEqual({ sheetVersion: ['sheetVersion must be 1'] });
    }
  });

  it('refuses unknown keys at every level, naming the path: a misspelt "fluids" is no silent default', () => {
    const s = demo('MR-1');
    s.loops[0].fluids = s.loops[0].fluid;
    delete s.loops[0].fluid;
    const e = errors(s);
    expect(Object.keys(e)).toEqual(['loops[0].fluids']);
    expect(e['loops[0].fluids']![0]).toMatch(/"fluids" is not a field/);
    expect(e['loops[0].fluids']![0]).toMatch(/fluid,/);

    const t = demo('MR-2');
    t.comment = 'x';
    t.spacecraft.colour = 'red';
    t.massProperties.cg_m = [0, 0, 0];
    t.orbit.epoch = 'now';
    t.loops[0].shape.radius_m = 0.1; // a circle's field on a rounded rectangle
    t.loops[0].channel.depth_m = 0.001;
    t.loops[0].fluid.density = 6440;
    t.loops[0].pumpStations[1].fieldT = 0.3;
    expect(Object.keys(errors(t)).sort()).toEqual(
      [
        'comment',
        'spacecraft.colour',
        'massProperties.cg_m',
        'orbit.epoch',
        'loops[0].shape.radius_m',
        'loops[0].channel.depth_m',
        'loops[0].fluid.density',
        'loops[0].pumpStations[1].fieldT',
      ].sort(),
    );
  });

  it('still takes the fluid default when the key is left out', () => {
    const s = demo('MR-1');
    delete s.loops[0].fluid;
    const r = spacecraftSheetSchema.parse(s);
    expect(r.loops[0]!.fluid).toEqual({ density_kg_m3: 6440, viscosity_Pa_s: 0.0024, conductivity_S_m: 3.46e6 });
  });

  it('stores an axis within 1e-6 of unit length normalised, and refuses one further off', () => {
    const s = demo('MR-1');
    s.loops[0].axis = [0, 0, 1 + 9e-7];
    expect(spacecraftSheetSchema.parse(s).loops[0]!.axis).toEqual([0, 0, 1]);
    s.loops[0].axis = [0.6, 0.8 - 5e-7, 0];
    const a = spacecraftSheetSchema.parse(s).loops[0]!.axis;
    expect(Math.hypot(...a)).toBeCloseTo(1, 15);
    expect(a[0] / a[1]).toBeCloseTo(0.6 / (0.8 - 5e-7), 14); // same direction
    s.loops[0].axis = [0, 0, 1 + 2e-6];
    expect(errors(s)['loops[0].axis']?.[0]).toMatch(/unit vector/);
    s.loops[0].axis = [0, 0, 0];
    expect(errors(s)['loops[0].axis']?.[0]).toMatch(/unit vector/);
  });

  it('reports every error of a sheet at once, the cross-field checks included', () => {
    const s = demo('MR-3');
    s.effectiveFrom = 'soon';
    s.orbit.tle[1] = s.orbit.tle[1].slice(0, 68) + String((Number(s.orbit.tle[1][68]) + 1) % 10);
    s.loops[0].ratedCurrent_A = -1;
    s.loops[0].shape = { kind: 'rounded-rectangle', width_m: 0.1, height_m: 0.1, cornerRadius_m: 0.2 };
    s.loops[1].id = s.loops[2].id;
    s.loops[2].axis = [1, 1, 0];
    s.loops[2].extra = true;
    s.massProperties.inertia_kg_m2 = [[1, 0, 0], [0, 1, 0], [0, 0, 3]];
    expect(Object.keys(errors(s)).sort()).toEqual(
      [
        'effectiveFrom',
        'orbit.tle[1]',
        'loops[0].ratedCurrent_A',
        'loops[0].shape.cornerRadius_m',
        'loops[2].id',
        'loops[2].axis',
        'loops[2].extra',
        'massProperties.inertia_kg_m2',
      ].sort(),
    );
  });
});
