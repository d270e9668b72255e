/**
 * Every quantity a limit may name must be readable by the trip engine: its `column` must be a
 * column of the table its `source` names, as the database's types in src/lib/server/db/schema.ts
 * declare them (read here with the TypeScript compiler's own parser, so the check follows the
 * file rather than a copy of it). `link` quantities are computed by key, not read from a column.
 */
import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import ts from 'typescript';
import { QUANTITIES, TRIP_KINDS, quantityInfo, type QuantityInfo } from '../../../src/lib/limits/quantities';

const SCHEMA = 'src/lib/server/db/schema.ts';

/** Property names of every interface in the schema file, with the interfaces it extends resolved. */
function interfaces(): Map<string, { props: Set<string>; bases: string[] }> {
  const src = ts.createSourceFile(SCHEMA, fs.readFileSync(SCHEMA, 'utf8'), ts.ScriptTarget.Latest, true);
  const out = new Map<string, { props: Set<string>; bases: string[] }>();
  src.forEachChild((node) => {
    if (!ts.isInterfaceDeclaration(node)) return;
    const props = new Set<string>();
    for (const m of node.members) if (ts.isPropertySignature(m) && m.name) props.add(m.name.getText(src));
    const bases = (node.heritageClauses ?? []).flatMap((h) => h.types.map((t) => t.expression.getText(src)));
    out.set(node.name.text, { props, bases });
  });
  return out;
}

const ifaces = interfaces();
function columnsOf(iface: string): Set<string> {
  const i = ifaces.get(iface);
  if (!i) throw new Error(`no interface ${iface} in ${SCHEMA}`);
  return new Set([...i.props, ...i.bases.flatMap((b) => [...columnsOf(b)])]);
}

/** The Database interface's table → row interface, through the interfaces it extends. */
function tables(): Map<string, string> {
  const src = ts.createSourceFile(SCHEMA, fs.readFileSync(SCHEMA, 'utf8'), ts.ScriptTarget.Latest, true);
  const map = new Map<string, string>();
  const visit = (name: string) => {
    src.forEachChild((node) => {
      if (!ts.isInterfaceDeclaration(node) || node.name.text !== name) return;
      for (const m of node.members) if (ts.isPropertySignature(m) && m.type) map.set(m.name.getText(src), m.type.getText(src));
      for (const h of node.heritageClauses ?? []) for (const t of h.types) visit(t.expression.getText(src));
    });
  };
  visit('Database');
  return map;
}
const TABLES = tables();

const TABLE_OF: Record<Exclude<QuantityInfo['source'], 'link'>, string> = {
  loop_window: 'loop_window',
  body_window: 'body_window',
  loop_sample: 'loop_sample',
  attitude_sample: 'attitude_sample',
  burst_analysis: 'burst_analysis',
};

describe('limit quantities', () => {
  it('reads the schema (sanity: a known column is found, a made-up one is not)', () => {
    const lw = columnsOf(TABLES.get('loop_window')!);
    expect(lw.has('drift_cusum_lo')).toBe(true);
    expect(lw.has('no_such_column')).toBe(false);
    // loop_sample's columns include those of the interface it extends
    expect(columnsOf(TABLES.get('loop_sample')!).has('spacecraft_id')).toBe(true);
  });

  it.each(QUANTITIES.filter((q) => q.source !== 'link').map((q) => [q.key, q] as const))('%s: its column exists in the table of its source', (_key, q) => {
    const table = TABLE_OF[q.source as keyof typeof TABLE_OF];
    const iface = TABLES.get(table);
    expect(iface, `table ${table} in the Database type`).toBeDefined();
    expect([...columnsOf(iface!)], `${q.key} → ${table}.${q.column}`).toContain(q.column);
  });

  it('link quantities are only those the trip engine computes by key', () => {
    expect(QUANTITIES.filter((q) => q.source === 'link').map((q) => q.key).sort()).toEqual(['data_age_s', 'missing_packets']);
  });

  it('row-scoped sources match their scope: per-loop tables are loop quantities, body tables body quantities', () => {
    for (const q of QUANTITIES) {
      if (q.source === 'loop_window' || q.source === 'loop_sample' || q.source === 'burst_analysis') expect(q.scope, q.key).toBe('loop');
      if (q.source === 'body_window' || q.source === 'attitude_sample' || q.source === 'link') expect(q.scope, q.key).toBe('body');
    }
  });

  it('keys are unique, every kind is a trip kind, and lookups find each', () => {
    expect(new Set(QUANTITIES.map((q) => q.key)).size).toBe(QUANTITIES.length);
    for (const q of QUANTITIES) {
      expect(TRIP_KINDS).toContain(q.kind);
      expect(quantityInfo(q.key)).toBe(q);
    }
  });

  it('names the raw channels, magnetometer, torque constant, standard errors, drift statistics and loop momentum', () => {
    for (const key of [
      'commanded_current_a', 'mag_x_nt', 'mag_y_nt', 'mag_z_nt', 'kt_nm_per_a', 'kt_stderr_nm_per_a', 'effectiveness_stderr',
      'pressure_constant_stderr_pa_per_a', 'ledger_stderr_x_nm', 'ledger_stderr_y_nm', 'ledger_stderr_z_nm', 'drift_ewma', 'drift_cusum_hi',
      'loop_momentum_mean_nms', 'loop_momentum_max_abs_nms',
    ]) expect(quantityInfo(key), key).toBeDefined();
  });
});
