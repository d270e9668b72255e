/**
 * The trip logic, shared by the live scheduler and the backtest: a limit is crossed when a value
 * stays beyond its caution (or warning) level for `persistence` consecutive points; the trip is
 * one record while the condition lasts, escalates from caution to warning in place, and clears
 * when the value returns inside the clear level (hysteresis).
 */

export type Level = 'caution' | 'warning';
export type Side = 'high' | 'low';

export interface Rule {
  cautionHigh: number | null;
  warningHigh: number | null;
  cautionLow: number | null;
  warningLow: number | null;
  clearHigh: number | null;
  clearLow: number | null;
  persistence: number;
}

export interface Point {
  /** Unix ms. */
  t: number;
  value: number | null;
}

export interface OpenTrip {
  level: Level;
  side: Side;
  /** First point of the run that raised it. */
  onsetT: number;
  raisedT: number;
  value: number;
  peak: number;
  limit: number;
}

export interface RuleState {
  /** Consecutive points beyond caution (and beyond warning), and on which side. */
  run: number;
  warnRun: number;
  runSide: Side | null;
  runStartT: number | null;
  open: OpenTrip | null;
}

export const initialRuleState = (): RuleState => ({ run: 0, warnRun: 0, runSide: null, runStartT: null, open: null });

export type TripEvent =
  | { type: 'opened'; t: number; trip: OpenTrip }
  | { type: 'escalated'; t: number; trip: OpenTrip }
  | { type: 'cleared'; t: number; trip: OpenTrip; value: number };

/** Which level and side a value is at, and the level it crossed. */
export function classify(rule: Rule, v: number): { level: Level | null; side: Side | null; limit: number | null } {
  if (rule.warningHigh !== null && v >= rule.warningHigh) return { level: 'warning', side: 'high', limit: rule.warningHigh };
  if (rule.warningLow !== null && v <= rule.warningLow) return { level: 'warning', side: 'low', limit: rule.warningLow };
  if (rule.cautionHigh !== null && v >= rule.cautionHigh) return { level: 'caution', side: 'high', limit: rule.cautionHigh };
  if (rule.cautionLow !== null && v <= rule.cautionLow) return { level: 'caution', side: 'low', limit: rule.cautionLow };
  return { level: null, side: null, limit: null };
}

function clearLevel(rule: Rule, side: Side): number | null {
  if (side === 'high') return rule.clearHigh ?? rule.cautionHigh ?? rule.warningHigh;
  return rule.clearLow ?? rule.cautionLow ?? rule.warningLow;
}

function isClear(rule: Rule, side: Side, v: number): boolean {
  const c = clearLevel(rule, side);
  if (c === null) return true;
  return side === 'high' ? v < c : v > c;
}

function limitFor(rule: Rule, level: Level, side: Side): number {
  const v = side === 'high' ? (level === 'warning' ? rule.warningHigh : rule.cautionHigh ?? rule.warningHigh) : level === 'warning' ? rule.warningLow : rule.cautionLow ?? rule.warningLow;
  return v as number;
}

/**
 * Run a rule over points in time order from a state; returns the events and the new state.
 * Points without a value (no estimate for that window) neither extend nor break a run.
 */
export function evaluateRule(rule: Rule, points: readonly Point[], from: RuleState = initialRuleState()): { events: TripEvent[]; state: RuleState } {
  const s: RuleState = { ...from, open: from.open ? { ...from.open } : null };
  const events: TripEvent[] = [];
  const need = Math.max(1, rule.persistence);
  for (const p of points) {
    if (p.value === null || !Number.isFinite(p.value)) continue;
    const v = p.value;
    const c = classify(rule, v);
    // Runs count consecutive points beyond a level on one side.
    if (c.level && c.side === s.runSide) {
      s.run++;
      s.warnRun = c.level === 'warning' ? s.warnRun + 1 : 0;
    } else if (c.level) {
      s.run = 1;
      s.warnRun = c.level === 'warning' ? 1 : 0;
      s.runSide = c.side;
      s.runStartT = p.t;
    } else {
      s.run = 0;
      s.warnRun = 0;
      s.runSide = null;
      s.runStartT = null;
    }

    if (s.open) {
      const o = s.open;
      if ((o.side === 'high' && v > o.peak) || (o.side === 'low' && v < o.peak)) o.peak = v;
      o.value = v;
      if (isClear(rule, o.side, v)) {
        events.push({ type: 'cleared', t: p.t, trip: { ...o }, value: v });
        s.open = null;
        continue;
      }
      if (o.level === 'caution' && c.level === 'warning' && c.side === o.side && s.warnRun >= need) {
        o.level = 'warning';
        o.limit = limitFor(rule, 'warning', o.side);
        events.push({ type: 'escalated', t: p.t, trip: { ...o } });
      }
      continue;
    }
    if (c.level && s.run >= need) {
      const level: Level = s.warnRun >= need ? 'warning' : 'caution';
      const trip: OpenTrip = { level, side: c.side!, onsetT: s.runStartT ?? p.t, raisedT: p.t, value: v, peak: v, limit: limitFor(rule, level, c.side!) };
      s.open = trip;
      events.push({ type: 'opened', t: p.t, trip: { ...trip } });
    }
  }
  return { events, state: s };
}
