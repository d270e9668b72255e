import type { LimitRuleInput } from './limit-set.schema';
import type { SpacecraftSheet } from '../spacecraft-sheet.schema';

/**
 * The demo fleet's default limits, each with where it comes from. They are starting points for
 * the engineer on the Limit bench, not flight rules.
 */
export const DEFAULT_RULES: LimitRuleInput[] = [
  {
    quantity: 'effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: 0.55, warningLow: 0.45, clearHigh: null, clearLow: 0.6, persistence: 3,
    rationale: 'Invented for the demo: healthy conduction-pumped loops reach about 0.6–0.8 of the ideal I·B·a·R; three consecutive 60 s windows below 0.55 is a loss worth a look.',
  },
  {
    quantity: 'drift_cusum_lo', loopId: null, cautionHigh: 12, warningHigh: 20, cautionLow: null, warningLow: null, clearHigh: 3, clearLow: null, persistence: 1,
    rationale: 'Tabular CUSUM with k = 0.5σ (NIST/SEMATECH e-Handbook §6.3.2.3) on the magnet-compensated effectiveness against a one-hour baseline. The textbook 4–5σ, and even 7σ, cry wolf here: on healthy simulated flight (4 seeds × 4 loops × 4 h, 2,896 windows) the window estimate wanders with the operating point; 2 of 16 series crossed 7σ, none 10σ (worst 7.9σ). A 2 % loss of torque constant (about 5σ per window) still reaches 12σ in three windows.',
  },
  {
    quantity: 'electrode_temp_mean_c', loopId: null, cautionHigh: 55, warningHigh: 70, cautionLow: null, warningLow: null, clearHigh: 50, clearLow: null, persistence: 2,
    rationale: 'Invented for the demo: a working electrode limit well below the alloy and seal limits of a desk-built loop.',
  },
  {
    quantity: 'rate_of_rise_k_s', loopId: null, cautionHigh: 0.02, warningHigh: 0.05, cautionLow: null, warningLow: null, clearHigh: 0.01, clearLow: null, persistence: 3,
    rationale: 'Physics: at the demo loops’ Joule power and heat capacity a healthy electrode rises far slower than 0.02 K/s once settled.',
  },
  {
    quantity: 'pulsation_peak', loopId: null, cautionHigh: 40, warningHigh: 120, cautionLow: null, warningLow: null, clearHigh: 25, clearLow: null, persistence: 2,
    rationale: 'Invented for the demo: a discrete pressure line of tens of pascals over the pump rise is far above the flowmeter noise floor.',
  },
  {
    quantity: 'margin_in_use_pct', loopId: null, cautionHigh: 80, warningHigh: 95, cautionLow: null, warningLow: null, clearHigh: 70, clearLow: null, persistence: 3,
    rationale: 'Common practice for momentum actuators: plan an unload before the store passes about 80 % of its capacity.',
  },
  {
    quantity: 'ledger_residual_nm', loopId: null, cautionHigh: 2e-5, warningHigh: 1e-4, cautionLow: null, warningLow: null, clearHigh: 1e-5, clearLow: null, persistence: 5,
    rationale: 'Physics: gravity-gradient and residual-dipole torques on a ~15 kg spacecraft are of order 1e-7–1e-6 N·m; a persistent residual far above that means the ledger is missing something.',
  },
  {
    quantity: 'measured_current_a', loopId: null, cautionHigh: 28, warningHigh: 32, cautionLow: -28, warningLow: -32, clearHigh: 26, clearLow: -26, persistence: 5,
    rationale: 'Fallback when no sheet is at hand (the demo ratings are 22–30 A). A spacecraft with a sheet gets its limits from each loop’s rated current instead (currentRulesFor).',
  },
  {
    quantity: 'data_age_s', loopId: null, cautionHigh: 30, warningHigh: 120, cautionLow: null, warningLow: null, clearHigh: 10, clearLow: null, persistence: 1,
    rationale: 'Common practice: real-time housekeeping at 10 Hz older than half a minute during a pass means the link is down.',
  },
  {
    quantity: 'missing_packets', loopId: null, cautionHigh: 20, warningHigh: 200, cautionLow: null, warningLow: null, clearHigh: 1, clearLow: null, persistence: 1,
    rationale: 'Invented for the demo: a few dropped packets a minute are tolerable; hundreds mean a bad link or a dump problem.',
  },
];

/**
 * Measured-current levels as multiples of a loop's rated current (the sheet's `ratedCurrent_A`).
 * Invented for the demo: caution at the rating itself (a pump should never be driven past it for
 * long), warning 15 % beyond it, and the trip clears once the current is back 5 % inside the rating.
 * Both signs: the current's sign is the pumping direction.
 */
export const CURRENT_LIMIT_FACTORS = { caution: 1, warning: 1.15, clear: 0.95 } as const;

/** Persistence of the current limits, in samples (half a second of 10 Hz housekeeping). */
const CURRENT_PERSISTENCE = 5;

const amps = (x: number) => Math.round(x * 1000) / 1000;

/** The measured-current limit of one rated current, for one loop or (null) every loop. */
export function currentRule(ratedCurrent_A: number, loopId: number | null): LimitRuleInput {
  if (!(Number.isFinite(ratedCurrent_A) && ratedCurrent_A > 0)) throw new Error(`currentRule: ratedCurrent_A must be a positive number (got ${ratedCurrent_A})`);
  const f = CURRENT_LIMIT_FACTORS;
  const caution = amps(ratedCurrent_A * f.caution);
  const warning = amps(ratedCurrent_A * f.warning);
  const clear = amps(ratedCurrent_A * f.clear);
  return {
    quantity: 'measured_current_a',
    loopId,
    cautionHigh: caution,
    warningHigh: warning,
    cautionLow: -caution,
    warningLow: -warning,
    clearHigh: clear,
    clearLow: -clear,
    persistence: CURRENT_PERSISTENCE,
    rationale: `From the sheet's rated current of ${ratedCurrent_A} A${loopId === null ? '' : ` (loop ${loopId})`}: caution at the rating, warning at ${f.warning}× it, clear at ${f.clear}× it (factors invented for the demo). Either sign: the sign is the pumping direction.`,
  };
}

/**
 * The measured-current limits of a sheet's loops: one rule for every loop when they share a
 * rating, else one rule per loop.
 */
export function currentRulesFor(loops: readonly Pick<SpacecraftSheet['loops'][number], 'id' | 'ratedCurrent_A'>[]): LimitRuleInput[] {
  if (!loops.length) throw new Error('currentRulesFor: the sheet has no loops');
  const ratings = new Set(loops.map((l) => l.ratedCurrent_A));
  if (ratings.size === 1) return [currentRule(loops[0]!.ratedCurrent_A, null)];
  return [...loops].sort((a, b) => a.id - b.id).map((l) => currentRule(l.ratedCurrent_A, l.id));
}

/**
 * The default limits of one spacecraft: DEFAULT_RULES in their order, with the all-loops
 * measured-current rule replaced (in place) by the limits its loops' ratings give.
 */
export function defaultRulesFor(sheet: { loops: readonly Pick<SpacecraftSheet['loops'][number], 'id' | 'ratedCurrent_A'>[] }): LimitRuleInput[] {
  return DEFAULT_RULES.flatMap((r) => (r.quantity === 'measured_current_a' && r.loopId === null ? currentRulesFor(sheet.loops) : [{ ...r }]));
}
