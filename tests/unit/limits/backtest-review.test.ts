import { describe, expect, it } from 'vitest';
import { diffRules } from '../../../src/lib/server/limit-review';
import { DEFAULT_RULES } from '../../../src/lib/limits/defaults';
import type { LimitRuleInput } from '../../../src/lib/limits/limit-set.schema';
import { backtestInputSchema, returnInputSchema } from '../../../src/features/limit-bench/limit-bench.schema';
import { formPathOf } from '../../../src/features/limit-bench/RulesForm';

const r = (over: Partial<LimitRuleInput>): LimitRuleInput => ({
  quantity: 'effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: 0.55, warningLow: 0.45, clearHigh: null, clearLow: 0.6, persistence: 3, rationale: '', ...over,
});

// Expected differences worked by hand from the two lists.
describe('differences between limit-set versions', () => {
  it('finds nothing between a set and its copy', () => {
    expect(diffRules(DEFAULT_RULES, DEFAULT_RULES.map((x) => ({ ...x })))).toEqual({ added: [], removed: [], changed: [], unchanged: DEFAULT_RULES.length });
  });

  it('pairs limits by quantity and loop and lists the changed fields only', () => {
    const before = [r({}), r({ quantity: 'electrode_temp_mean_c', cautionLow: null, warningLow: null, clearLow: null, cautionHigh: 55, warningHigh: 70, clearHigh: 50, persistence: 2 })];
    const after = [
      r({ cautionLow: 0.6, clearLow: 0.65 }),
      r({ quantity: 'effectiveness', loopId: 1, cautionLow: 0.5 }),
    ];
    const d = diffRules(before, after);
    expect(d.changed).toEqual([
      {
        key: 'effectiveness|all', quantity: 'effectiveness', label: 'Effectiveness (kT / ideal)', loopId: null,
        fields: [
          { field: 'cautionLow', before: 0.55, after: 0.6 },
          { field: 'clearLow', before: 0.6, after: 0.65 },
        ],
      },
    ]);
    expect(d.added.map((a) => a.key)).toEqual(['effectiveness|1']);
    expect(d.removed.map((a) => a.key)).toEqual(['electrode_temp_mean_c|all']);
    expect(d.unchanged).toBe(0);
  });

  it('tells two limits on the same quantity and loop apart by their order', () => {
    const a = [r({ persistence: 3 }), r({ persistence: 10, cautionLow: 0.6, warningLow: 0.5, clearLow: 0.62 })];
    const d = diffRules(a, [a[0]!]);
    expect(d.removed.map((x) => [x.key, x.rule.persistence])).toEqual([['effectiveness|all|2', 10]]);
    expect(d.unchanged).toBe(1);
  });

  it('reports a rationale or persistence change field by field', () => {
    const d = diffRules([r({})], [r({ persistence: 5, rationale: 'after the bench test' })]);
    expect(d.changed[0]!.fields).toEqual([
      { field: 'persistence', before: 3, after: 5 },
      { field: 'rationale', before: '', after: 'after the bench test' },
    ]);
  });
});

describe('Limit bench inputs', () => {
  it('needs both ends of a backtest span or neither, the end after the start', () => {
    expect(backtestInputSchema.safeParse({}).success).toBe(true);
    expect(backtestInputSchema.safeParse({ from: '2026-11-01T00:00:00Z', to: '2026-11-30T00:00:00Z' }).success).toBe(true);
    const half = backtestInputSchema.safeParse({ from: '2026-11-01T00:00:00Z' });
    expect(half.success ? [] : half.error.issues.map((i) => i.path.join('.'))).toEqual(['to']);
    const back = backtestInputSchema.safeParse({ from: '2026-11-30T00:00:00Z', to: '2026-11-01T00:00:00Z' });
    expect(back.success ? '' : back.error.issues[0]!.message).toBe('must be after the start');
    expect(backtestInputSchema.safeParse({ from: 'yesterday', to: '2026-11-01T00:00:00Z' }).success).toBe(false);
  });

  it('returns a set only with comments', () => {
    expect(returnInputSchema.safeParse({ comment: '   ' }).success).toBe(false);
    expect(returnInputSchema.safeParse({ comment: 'Loosen the clear level' }).success).toBe(true);
  });

  it('puts the server’s field errors on the form’s fields', () => {
    expect(formPathOf('rules[3].cautionHigh')).toBe('rules.3.cautionHigh');
    expect(formPathOf('name')).toBe('name');
  });
});
