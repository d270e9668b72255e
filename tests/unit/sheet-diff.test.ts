import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { spacecraftSheetSchema, type SheetLoop, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { diffLeaves, diffSheets, diffSummary, flattenLeaves, sheetHistoryDiffs, unitOfPath } from '../../src/lib/sheet-diff';

// The upload's rule: a change of more than 3 % of a loop's ideal torque constant is called out.
const FRACTION = 0.03;
const opts = { ktWarningFraction: FRACTION };

const base: SpacecraftSheet = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8')));

/** A deep copy of the base sheet, changed by `edit`, validated again. */
function variant(edit: (s: SpacecraftSheet) => void, effectiveFrom = '2026-12-01T00:00:00Z'): SpacecraftSheet {
  const s = structuredClone(base);
  s.effectiveFrom = effectiveFrom;
  edit(s);
  return spacecraftSheetSchema.parse(s);
}

const loop0 = (s: SpacecraftSheet): SheetLoop => s.loops.find((l) => l.id === 0)!;

/** Principal moments by an independent library: ml-matrix's symmetric eigenvalue decomposition, ascending. */
function principalByMlMatrix(m: number[][]): number[] {
  return [...new EigenvalueDecomposition(new Matrix(m), { assumeSymmetric: true }).realEigenvalues].sort((a, b) => a - b);
}

describe('flattenLeaves and diffLeaves', () => {
  it('name each leaf by its JSON path', () => {
    const leaves = flattenLeaves({ shape: { kind: 'circle', radius_m: 0.08 }, axis: [0, 0, 1], pumpStations: [{ field_T: 0.4 }] });
    expect([...leaves.entries()]).toEqual([
      ['shape.kind', 'circle'],
      ['shape.radius_m', 0.08],
      ['axis[0]', 0],
      ['axis[1]', 0],
      ['axis[2]', 1],
      ['pumpStations[0].field_T', 0.4],
    ]);
  });

  it('reports changed, removed and added leaves, and nothing for equal values (0 and −0 alike)', () => {
    expect(diffLeaves({ a: 1, b: [0, 2], c: 'x' }, { a: 1, b: [-0, 3], d: true })).toEqual([
      { path: 'b[1]', before: 2, after: 3 },
      { path: 'c', before: 'x', after: null },
      { path: 'd', before: null, after: true },
    ]);
    expect(diffLeaves(base, structuredClone(base))).toEqual([]);
  });

  it.each([
    ['shape.radius_m', 'm'],
    ['pumpStations[1].field_T', 'T'],
    ['ratedCurrent_A', 'A'],
    ['fluid.density_kg_m3', 'kg/m³'],
    ['fluid.viscosity_Pa_s', 'Pa·s'],
    ['fluid.conductivity_S_m', 'S/m'],
    ['axis[2]', ''],
    ['shape.kind', ''],
  ])('unit of %s is "%s"', (path, unit) => {
    expect(unitOfPath(path)).toBe(unit);
  });
});

describe('diffSheets', () => {
  it('finds nothing but the date when only effectiveFrom differs', () => {
    const d = diffSheets(base, variant(() => undefined), opts);
    expect(d.unchanged).toBe(true);
    expect(d.inertia).toEqual([]);
    expect(d.principal.changes).toEqual([]);
    expect(d.loops).toEqual({ added: [], removed: [], changed: [] });
    expect(d.idealKt.map((k) => k.change)).toEqual([0]);
    expect(d.idealKtShifts).toEqual([]);
    expect(diffSummary(d)).toBe('same as previous');
  });

  it('lists inertia changes element by element (upper triangle) with principal moments checked against ml-matrix', () => {
    const after = variant((s) => {
      const m = s.massProperties.inertia_kg_m2;
      m[0][0] = 0.141;
      m[0][1] = 0.0035;
      m[1][0] = 0.0035;
    });
    const d = diffSheets(base, after, opts);
    expect(d.inertia.map((e) => [e.label, e.row, e.col, e.before, e.after])).toEqual([
      ['Ixx', 0, 0, 0.134, 0.141],
      ['Ixy', 0, 1, 0.0021, 0.0035],
    ]);
    expect(d.inertia[0]!.delta).toBeCloseTo(0.007, 12);
    expect(d.inertia[0]!.relative).toBeCloseTo(0.007 / 0.134, 12);
    // Independent check: ml-matrix (npm), a port of the JAMA/EISPACK symmetric eigen solver.
    const pb = principalByMlMatrix(base.massProperties.inertia_kg_m2);
    const pa = principalByMlMatrix(after.massProperties.inertia_kg_m2);
    d.principal.before.forEach((v, k) => expect(v).toBeCloseTo(pb[k]!, 12));
    d.principal.after.forEach((v, k) => expect(v).toBeCloseTo(pa[k]!, 12));
    expect(d.principal.changes.length).toBeGreaterThan(0);
    for (const c of d.principal.changes) expect(c.delta).toBeCloseTo(c.after - c.before, 15);
    // The trace is invariant: the principal moments sum to the diagonal (common practice, linear algebra).
    const sum = (xs: readonly number[]) => xs.reduce((a, b) => a + b, 0);
    expect(sum(d.principal.after)).toBeCloseTo(0.141 + 0.129 + 0.0835, 12);
    expect(d.unchanged).toBe(false);
    expect(diffSummary(d)).toBe('inertia changed');
  });

  it('reports a mass change with its relative change', () => {
    const d = diffSheets(base, variant((s) => (s.massProperties.mass_kg = 13.64)), opts);
    expect(d.mass).toMatchObject({ before: 12.4, after: 13.64 });
    expect(d.mass!.relative).toBeCloseTo(0.1, 12);
    expect(diffSummary(d)).toBe('mass changed');
  });

  it('compares ideal torque constants: circle, one station, kT = B·a·R (Δp = I·B/b, Young & Freedman, University Physics; lever arm 2S/L = R)', () => {
    // MR-1 loop L0: B 0.4 T, a (along current) 5 mm, R 80 mm → 1.6e-4 N·m/A.
    const same = diffSheets(base, variant(() => undefined), opts).idealKt[0]!;
    expect(same.before).toBeCloseTo(0.4 * 0.005 * 0.08, 15);

    // +4 % field: beyond 3 %, called out.
    const up = diffSheets(base, variant((s) => (loop0(s).pumpStations[0]!.field_T = 0.416)), opts);
    expect(up.idealKt[0]!.after).toBeCloseTo(0.416 * 0.005 * 0.08, 15);
    expect(up.idealKt[0]!.change).toBeCloseTo(0.04, 12);
    expect(up.idealKtShifts.map((k) => k.loopId)).toEqual([0]);
    expect(up.loops.changed).toEqual([{ loopId: 0, fields: [{ path: 'pumpStations[0].field_T', before: 0.4, after: 0.416 }] }]);
    expect(diffSummary(up)).toBe('L0 changed');

    // +2 % radius: within 3 %, listed but not called out.
    const small = diffSheets(base, variant((s) => ((loop0(s).shape as { radius_m: number }).radius_m = 0.0816)), opts);
    expect(small.idealKt[0]!.change).toBeCloseTo(0.02, 12);
    expect(small.idealKt[0]!.warn).toBe(false);
    expect(small.idealKtShifts).toEqual([]);

    // −5 % along the current: a falls, kT falls in proportion.
    const down = diffSheets(base, variant((s) => (loop0(s).channel.alongCurrent_m = 0.00475)), opts);
    expect(down.idealKt[0]!.change).toBeCloseTo(-0.05, 12);
    expect(down.idealKtShifts[0]!.warn).toBe(true);

    // The field across the channel (b) cancels: Δp = I·B/b over A = a·b leaves kT unchanged.
    const b = diffSheets(base, variant((s) => (loop0(s).channel.alongField_m = 0.004)), opts);
    expect(b.idealKt[0]!.change).toBeCloseTo(0, 12);
    expect(b.loops.changed[0]!.fields).toEqual([{ path: 'channel.alongField_m', before: 0.003, after: 0.004 }]);
  });

  it('follows a change of shape field by field, with the lever arm of a rounded square', () => {
    const after = variant((s) => {
      loop0(s).shape = { kind: 'rounded-rectangle', width_m: 0.2, height_m: 0.2, cornerRadius_m: 0.02 };
    });
    const d = diffSheets(base, after, opts);
    expect(d.loops.changed[0]!.fields).toEqual([
      { path: 'shape.kind', before: 'circle', after: 'rounded-rectangle' },
      { path: 'shape.radius_m', before: 0.08, after: null },
      { path: 'shape.width_m', before: null, after: 0.2 },
      { path: 'shape.height_m', before: null, after: 0.2 },
      { path: 'shape.cornerRadius_m', before: null, after: 0.02 },
    ]);
    // Rounded square side 0.2 m, corner radius 0.02 m: S = 0.0396566 m² (derived, closed planar loop);
    // centreline L = 4s − (8 − 2π) r (common practice, perimeter of a rounded rectangle).
    const S = 0.0396566;
    const L = 4 * 0.2 - (8 - 2 * Math.PI) * 0.02;
    expect(d.idealKt[0]!.after / d.idealKt[0]!.before).toBeCloseTo((2 * S) / L / 0.08, 5);
    expect(d.idealKtShifts.map((k) => k.loopId)).toEqual([0]);
  });

  it('lists an added pump station as fields that were absent', () => {
    const d = diffSheets(base, variant((s) => loop0(s).pumpStations.push({ field_T: 0.4, electrodeLength_m: 0.02 })), opts);
    expect(d.loops.changed[0]!.fields).toEqual([
      { path: 'pumpStations[1].field_T', before: null, after: 0.4 },
      { path: 'pumpStations[1].electrodeLength_m', before: null, after: 0.02 },
    ]);
    // Two stations in series: the pressure constants add, so kT doubles.
    expect(d.idealKt[0]!.change).toBeCloseTo(1, 12);
  });

  it('reports loops added and removed, and leaves their torque constants out of the comparison', () => {
    const extra: SheetLoop = { ...structuredClone(loop0(base)), id: 2, axis: [1, 0, 0] };
    const withTwo = variant((s) => s.loops.push(extra));
    const added = diffSheets(base, withTwo, opts);
    expect(added.loops.added.map((l) => l.id)).toEqual([2]);
    expect(added.loops.removed).toEqual([]);
    expect(added.idealKt.map((k) => k.loopId)).toEqual([0]);
    expect(diffSummary(added)).toBe('L2 added');

    const removed = diffSheets(withTwo, variant((s) => (s.loops = [structuredClone(extra)]), '2027-01-01T00:00:00Z'), opts);
    expect(removed.loops.removed.map((l) => l.id)).toEqual([0]);
    expect(removed.loops.added).toEqual([]);
    expect(removed.loops.changed).toEqual([]);
    expect(diffSummary(removed)).toBe('L0 removed');
  });

  it('notices a new element set and a new name', () => {
    const d = diffSheets(
      base,
      variant((s) => {
        s.spacecraft.name = 'Headrace Pathfinder II';
        s.orbit.tle = ['1 99101U 26912A   26330.50000000  .00000812  00000-0  41220-4 0  9982', base.orbit.tle[1]];
      }),
      opts,
    );
    expect(d.orbit?.after[0]).toContain('26330.5');
    expect(d.name).toEqual({ path: 'spacecraft.name', before: 'Headrace Pathfinder', after: 'Headrace Pathfinder II' });
    expect(diffSummary(d)).toBe('orbit, name changed');
  });
});

describe('sheetHistoryDiffs', () => {
  it('compares each sheet with the one effective before it, whatever order the rows come in', () => {
    const s1 = { id: 11, effective_from: '2026-11-01T00:00:00.000Z', sheet: base };
    const s2 = { id: 12, effective_from: '2026-12-01T00:00:00.000Z', sheet: variant((s) => (loop0(s).pumpStations[0]!.field_T = 0.44)) };
    // Uploaded last but effective between the two: compared with s1, and s2 is compared with it.
    const s3 = { id: 13, effective_from: '2026-11-15T00:00:00.000Z', sheet: variant((s) => (s.massProperties.mass_kg = 12.5), '2026-11-15T00:00:00Z') };
    const h = sheetHistoryDiffs([s2, s3, s1], opts);
    expect(h.get(11)).toEqual({ previous: null, diff: null });
    expect(h.get(13)!.previous?.id).toBe(11);
    expect(diffSummary(h.get(13)!.diff)).toBe('mass changed');
    expect(h.get(12)!.previous?.id).toBe(13);
    expect(diffSummary(h.get(12)!.diff)).toBe('mass, L0 changed');
    expect(h.get(12)!.diff!.idealKtShifts[0]!.change).toBeCloseTo(0.1, 12);
    expect(diffSummary(null)).toBe('first sheet');
  });
});
