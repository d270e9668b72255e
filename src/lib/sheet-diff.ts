import type { SheetLoop, SpacecraftSheet } from './spacecraft-sheet.schema';
import { symmetricEigenvalues3 } from './physics/eigen3';
import { idealTorqueConstant } from './physics/pump';

/*
 * What changed from one sheet to the next: the inertia element by element and its principal
 * moments, the mass, the orbit, and each loop added, removed or changed field by field; with each
 * common loop's ideal torque constant before and after, flagged when it moves by more than the
 * warning fraction (the same rule the upload applies). Pure: no I/O, no clock.
 */

type Leaf = string | number | boolean | null;

/** One changed field (null on the side where it does not exist). */
export interface FieldChange {
  path: string;
  before: Leaf;
  after: Leaf;
}

/** A changed number with its difference and relative difference (null when it was 0). */
export interface NumberChange {
  label: string;
  before: number;
  after: number;
  delta: number;
  relative: number | null;
}

export interface InertiaElementChange extends NumberChange {
  row: number;
  col: number;
}

export interface LoopChange {
  loopId: number;
  fields: FieldChange[];
}

export interface IdealKtChange {
  loopId: number;
  /** N·m/A */
  before: number;
  /** N·m/A */
  after: number;
  /** after/before − 1 */
  change: number;
  /** |change| is above the warning fraction. */
  warn: boolean;
}

export interface SheetDiff {
  name: FieldChange | null;
  mass: NumberChange | null;
  /** Changed elements of the symmetric inertia matrix, upper triangle (xx, yy, zz, xy, xz, yz). */
  inertia: InertiaElementChange[];
  /** Principal moments before and after, ascending, kg·m²; `changes` only when they differ. */
  principal: { before: [number, number, number]; after: [number, number, number]; changes: NumberChange[] };
  orbit: { before: [string, string]; after: [string, string] } | null;
  loops: { added: SheetLoop[]; removed: SheetLoop[]; changed: LoopChange[] };
  /** Every loop present in both sheets. */
  idealKt: IdealKtChange[];
  /** The loops whose ideal torque constant moves beyond the warning fraction. */
  idealKtShifts: IdealKtChange[];
  /** Nothing but the effective date differs. */
  unchanged: boolean;
}

const AXES = ['x', 'y', 'z'] as const;
const UPPER: [number, number][] = [
  [0, 0],
  [1, 1],
  [2, 2],
  [0, 1],
  [0, 2],
  [1, 2],
];

function numberChange(label: string, before: number, after: number): NumberChange {
  return { label, before, after, delta: after - before, relative: before === 0 ? null : after / before - 1 };
}

/** Flatten a JSON value into leaves by JSON path: { a: { b: [1, 2] } } → a.b[0], a.b[1]. */
export function flattenLeaves(value: unknown, prefix = '', out = new Map<string, Leaf>()): Map<string, Leaf> {
  if (Array.isArray(value)) {
    value.forEach((v, i) => flattenLeaves(v, `${prefix}[${i}]`, out));
  } else if (value !== null && typeof value === 'object') {
    for (const [k, v] of Object.entries(value as Record<string, unknown>)) flattenLeaves(v, prefix ? `${prefix}.${k}` : k, out);
  } else if (value === null || typeof value === 'string' || typeof value === 'number' || typeof value === 'boolean') {
    out.set(prefix, value);
  }
  return out;
}

/** Leaves that differ between two JSON values, in the order of `before` then the new ones of `after`. */
export function diffLeaves(before: unknown, after: unknown): FieldChange[] {
  const a = flattenLeaves(before);
  const b = flattenLeaves(after);
  const out: FieldChange[] = [];
  for (const [path, v] of a) {
    const w = b.has(path) ? b.get(path)! : null;
    if (!Object.is(v, w) && !(v === 0 && w === 0)) out.push({ path, before: v, after: w });
  }
  for (const [path, w] of b) if (!a.has(path)) out.push({ path, before: null, after: w });
  return out;
}

const UNIT_SUFFIXES: [RegExp, string][] = [
  [/_kg_m3$/, 'kg/m³'],
  [/_Pa_s$/, 'Pa·s'],
  [/_S_m$/, 'S/m'],
  [/_kg_m2$/, 'kg·m²'],
  [/_kg$/, 'kg'],
  [/_m$/, 'm'],
  [/_T$/, 'T'],
  [/_A$/, 'A'],
];

/** The SI unit a sheet field's name carries (radius_m → m), or '' when it has none. */
export function unitOfPath(path: string): string {
  const last = path.replace(/\[\d+\]$/, '').split('.').pop() ?? '';
  for (const [re, unit] of UNIT_SUFFIXES) if (re.test(last)) return unit;
  return '';
}

/** The diff from `before` to `after` (both validated sheets). */
export function diffSheets(before: SpacecraftSheet, after: SpacecraftSheet, opts: { ktWarningFraction: number }): SheetDiff {
  const ib = before.massProperties.inertia_kg_m2;
  const ia = after.massProperties.inertia_kg_m2;
  const inertia: InertiaElementChange[] = [];
  for (const [i, j] of UPPER) {
    const b = ib[i]![j]!;
    const a = ia[i]![j]!;
    if (b !== a) inertia.push({ ...numberChange(`I${AXES[i]}${AXES[j]}`, b, a), row: i, col: j });
  }
  const pb = symmetricEigenvalues3(ib);
  const pa = inertia.length ? symmetricEigenvalues3(ia) : pb;
  const scale = Math.max(...pb.map(Math.abs), ...pa.map(Math.abs));
  const principalChanges = inertia.length
    ? pb.map((b, k) => numberChange(`I${k + 1}`, b, pa[k]!)).filter((c) => Math.abs(c.delta) > 1e-12 * scale)
    : [];

  const mass = before.massProperties.mass_kg !== after.massProperties.mass_kg ? numberChange('mass', before.massProperties.mass_kg, after.massProperties.mass_kg) : null;
  const name = before.spacecraft.name !== after.spacecraft.name ? { path: 'spacecraft.name', before: before.spacecraft.name, after: after.spacecraft.name } : null;
  const tb = before.orbit.tle;
  const ta = after.orbit.tle;
  const orbit = tb[0] !== ta[0] || tb[1] !== ta[1] ? { before: [tb[0], tb[1]] as [string, string], after: [ta[0], ta[1]] as [string, string] } : null;

  const beforeLoops = new Map(before.loops.map((l) => [l.id, l]));
  const afterLoops = new Map(after.loops.map((l) => [l.id, l]));
  const added = after.loops.filter((l) => !beforeLoops.has(l.id)).sort((x, y) => x.id - y.id);
  const removed = before.loops.filter((l) => !afterLoops.has(l.id)).sort((x, y) => x.id - y.id);
  const changed: LoopChange[] = [];
  const idealKt: IdealKtChange[] = [];
  for (const lb of [...before.loops].sort((x, y) => x.id - y.id)) {
    const la = afterLoops.get(lb.id);
    if (!la) continue;
    const fields = diffLeaves(lb, la);
    if (fields.length) changed.push({ loopId: lb.id, fields });
    const kb = idealTorqueConstant(lb);
    const ka = idealTorqueConstant(la);
    const change = ka / kb - 1;
    idealKt.push({ loopId: lb.id, before: kb, after: ka, change, warn: Math.abs(change) > opts.ktWarningFraction });
  }

  return {
    name,
    mass,
    inertia,
    principal: { before: pb, after: pa, changes: principalChanges },
    orbit,
    loops: { added, removed, changed },
    idealKt,
    idealKtShifts: idealKt.filter((k) => k.warn),
    unchanged: !name && !mass && inertia.length === 0 && !orbit && added.length === 0 && removed.length === 0 && changed.length === 0,
  };
}

/**
 * Each sheet of a history with the one in force before it (the latest with an earlier effective
 * date, as the upload compares) and the diff against it; both null for the earliest.
 */
export function sheetHistoryDiffs<T extends { id: number; effective_from: string; sheet: SpacecraftSheet }>(
  rows: readonly T[],
  opts: { ktWarningFraction: number },
): Map<number, { previous: T | null; diff: SheetDiff | null }> {
  const ordered = [...rows].sort((a, b) => Date.parse(a.effective_from) - Date.parse(b.effective_from) || a.id - b.id);
  const out = new Map<number, { previous: T | null; diff: SheetDiff | null }>();
  ordered.forEach((row, i) => {
    const previous = i === 0 ? null : ordered[i - 1]!;
    out.set(row.id, { previous, diff: previous ? diffSheets(previous.sheet, row.sheet, opts) : null });
  });
  return out;
}

/** A one-line summary of a diff for the history table: "inertia, L1 changed; L2 added". */
export function diffSummary(d: SheetDiff | null): string {
  if (d === null) return 'first sheet';
  if (d.unchanged) return 'same as previous';
  const parts: string[] = [];
  if (d.mass) parts.push('mass');
  if (d.inertia.length) parts.push('inertia');
  if (d.orbit) parts.push('orbit');
  if (d.name) parts.push('name');
  for (const l of d.loops.changed) parts.push(`L${l.loopId}`);
  const changed = parts.length ? `${parts.join(', ')} changed` : '';
  const extra = [
    d.loops.added.length ? `${d.loops.added.map((l) => `L${l.id}`).join(', ')} added` : '',
    d.loops.removed.length ? `${d.loops.removed.map((l) => `L${l.id}`).join(', ')} removed` : '',
  ].filter(Boolean);
  return [changed, ...extra].filter(Boolean).join('; ');
}
