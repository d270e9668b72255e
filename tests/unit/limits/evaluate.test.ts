import { describe, expect, it } from 'vitest';
import { evaluateRule, initialRuleState, type Rule } from '../../../src/lib/limits/evaluate';
import { limitRuleInputSchema } from '../../../src/lib/limits/limit-set.schema';
import { DEFAULT_RULES } from '../../../src/lib/limits/defaults';
import { QUANTITIES } from '../../../src/lib/limits/quantities';

const high: Rule = { cautionHigh: 10, warningHigh: 20, cautionLow: null, warningLow: null, clearHigh: 8, clearLow: null, persistence: 3 };
const pts = (vals: (number | null)[]) => vals.map((value, i) => ({ t: i * 1000, value }));

// Hand-worked sequences (derived by hand from the rule's definition).
describe('evaluateRule', () => {
  it('opens only after `persistence` consecutive points beyond caution, with onset at the run start', () => {
    const { events } = evaluateRule(high, pts([5, 11, 12, 5, 11, 12, 13, 14]));
    expect(events).toHaveLength(1);
    expect(events[0]).toMatchObject({ type: 'opened', t: 6000, trip: { level: 'caution', side: 'high', onsetT: 4000, limit: 10 } });
  });
  it('is one record while the condition lasts, escalates in place, and clears below the clear level only', () => {
    const { events, state } = evaluateRule(high, pts([11, 11, 11, 12, 21, 22, 23, 9, 9.5, 7.9, 11]));
    expect(events.map((e) => e.type)).toEqual(['opened', 'escalated', 'cleared']);
    expect(events[1]).toMatchObject({ t: 6000, trip: { level: 'warning', limit: 20 } });
    expect(events[2]).toMatchObject({ t: 9000, value: 7.9, trip: { peak: 23 } });
    expect(state.open).toBeNull();
    expect(state.run).toBe(1);
  });
  it('opens straight at warning when the warning level itself persisted', () => {
    const { events } = evaluateRule(high, pts([25, 26, 27]));
    expect(events[0]).toMatchObject({ type: 'opened', trip: { level: 'warning', limit: 20 } });
  });
  it('skips missing values without breaking a run', () => {
    expect(evaluateRule(high, pts([11, null, 11, null, 11])).events).toHaveLength(1);
  });
  it('continues from a saved state exactly as one pass over all points', () => {
    const all = pts([11, 12, 13, 21, 22, 23, 5, 11, 11, 11]);
    const one = evaluateRule(high, all);
    const a = evaluateRule(high, all.slice(0, 4));
    const b = evaluateRule(high, all.slice(4), JSON.parse(JSON.stringify(a.state)));
    expect([...a.events, ...b.events]).toEqual(one.events);
    expect(b.state).toEqual(one.state);
  });
  it('handles low-side limits', () => {
    const low: Rule = { cautionHigh: null, warningHigh: null, cautionLow: 0.55, warningLow: 0.45, clearHigh: null, clearLow: 0.6, persistence: 2 };
    const { events } = evaluateRule(low, pts([0.7, 0.54, 0.5, 0.44, 0.43, 0.58, 0.61]));
    expect(events.map((e) => `${e.type}:${e.trip.level}`)).toEqual(['opened:caution', 'escalated:warning', 'cleared:warning']);
    expect(initialRuleState().open).toBeNull();
  });
});

describe('limit rule validation', () => {
  const base = { quantity: 'electrode_temp_mean_c', loopId: 0, cautionHigh: 55, warningHigh: 70, cautionLow: null, warningLow: null, clearHigh: 50, clearLow: null, persistence: 2, rationale: '' };
  const errors = (over: object) => {
    const r = limitRuleInputSchema.safeParse({ ...base, ...over });
    return r.success ? {} : Object.fromEntries(r.error.issues.map((i) => [i.path.join('.'), i.message]));
  };
  it('accepts a well-ordered rule', () => expect(errors({})).toEqual({}));
  it('puts each ordering error on its field', () => {
    expect(errors({ cautionHigh: 75 })).toHaveProperty('cautionHigh');
    expect(errors({ clearHigh: 60 })).toHaveProperty('clearHigh');
    expect(errors({ persistence: 0 })).toHaveProperty('persistence');
    expect(errors({ quantity: 'warp_factor' })).toHaveProperty('quantity');
    expect(errors({ quantity: 'ledger_residual_nm', cautionHigh: 1, warningHigh: 2, clearHigh: 0.5 })).toHaveProperty('loopId');
    expect(errors({ cautionHigh: null, warningHigh: null, clearHigh: null })).toHaveProperty('cautionHigh');
  });
  it('every default rule validates and names a known quantity', () => {
    for (const r of DEFAULT_RULES) expect(limitRuleInputSchema.safeParse(r).success, r.quantity).toBe(true);
    const kinds = new Set(DEFAULT_RULES.map((r) => QUANTITIES.find((x) => x.key === r.quantity)!.kind));
    expect([...kinds].sort()).toEqual(['channel-limit', 'flow-pulsation', 'ledger-residual', 'momentum-margin', 'telemetry-gap', 'temperature-rise', 'torque-constant-drift']);
  });
});
