import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { spacecraftSheetSchema } from '../../../src/lib/spacecraft-sheet.schema';
import { CURRENT_LIMIT_FACTORS, DEFAULT_RULES, currentRule, currentRulesFor, defaultRulesFor } from '../../../src/lib/limits/defaults';
import { limitRuleInputSchema, limitSetInputSchema, loopProblems } from '../../../src/lib/limits/limit-set.schema';

const sheet = (key: string) => spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync(`ingest/fleet/${key}.json`, 'utf8')));

describe('default limits per spacecraft', () => {
  it.each(['MR-1', 'MR-2', 'MR-3'])('%s: the measured-current limits follow each loop’s rated current', (key) => {
    const s = sheet(key);
    const rules = defaultRulesFor(s);
    const current = rules.filter((r) => r.quantity === 'measured_current_a');
    expect(current.length).toBeGreaterThan(0);
    for (const loop of s.loops) {
      // the rule that judges this loop: its own, or the all-loops one
      const r = current.find((x) => x.loopId === loop.id) ?? current.find((x) => x.loopId === null)!;
      expect(r.cautionHigh).toBeCloseTo(loop.ratedCurrent_A, 9);
      expect(r.warningHigh).toBeCloseTo(loop.ratedCurrent_A * 1.15, 9);
      expect(r.clearHigh).toBeCloseTo(loop.ratedCurrent_A * 0.95, 9);
      expect(r.cautionLow).toBeCloseTo(-loop.ratedCurrent_A, 9);
      expect(r.warningLow).toBeCloseTo(-loop.ratedCurrent_A * 1.15, 9);
      expect(r.clearLow).toBeCloseTo(-loop.ratedCurrent_A * 0.95, 9);
      expect(r.rationale).toContain(`${loop.ratedCurrent_A} A`);
    }
    // the set is valid and names only loops the spacecraft has
    const set = limitSetInputSchema.parse({ name: 'Default limits', rules });
    expect(loopProblems(set, s.loops.map((l) => l.id))).toEqual({});
  });

  it('the demo ratings differ, so the seeded cautions differ (25, 30 and 22 A)', () => {
    const caution = (key: string) => defaultRulesFor(sheet(key)).find((r) => r.quantity === 'measured_current_a')!.cautionHigh;
    expect([caution('MR-1'), caution('MR-2'), caution('MR-3')]).toEqual([25, 30, 22]);
  });

  it('keeps DEFAULT_RULES’ order, replacing only the all-loops current rule in place', () => {
    const rules = defaultRulesFor(sheet('MR-2'));
    const at = DEFAULT_RULES.findIndex((r) => r.quantity === 'measured_current_a');
    expect(rules.map((r) => r.quantity)).toEqual(DEFAULT_RULES.map((r) => r.quantity));
    expect(rules.filter((_, i) => i !== at)).toEqual(DEFAULT_RULES.filter((_, i) => i !== at));
    expect(rules[at]).toMatchObject({ cautionHigh: 30, warningHigh: 34.5 });
  });

  it('one rule per loop when the loops’ ratings differ', () => {
    const rules = currentRulesFor([{ id: 1, ratedCurrent_A: 20 }, { id: 0, ratedCurrent_A: 12 }]);
    expect(rules.map((r) => [r.loopId, r.cautionHigh, r.warningHigh])).toEqual([[0, 12, 13.8], [1, 20, 23]]);
    for (const r of rules) expect(limitRuleInputSchema.safeParse(r).success).toBe(true);
    expect(currentRulesFor([{ id: 0, ratedCurrent_A: 22 }, { id: 2, ratedCurrent_A: 22 }]).map((r) => r.loopId)).toEqual([null]);
  });

  it('factors are the stated ones and a bad rating is refused', () => {
    expect(CURRENT_LIMIT_FACTORS).toEqual({ caution: 1, warning: 1.15, clear: 0.95 });
    expect(() => currentRule(0, null)).toThrow(/ratedCurrent_A must be a positive number/);
    expect(() => currentRule(Number.NaN, 0)).toThrow(/ratedCurrent_A/);
    expect(() => currentRulesFor([])).toThrow(/no loops/);
  });
});
