/**
 * How far back before a loop's latest analysed window the Fleet looks for its newest effectiveness
 * estimate. Windows with too little current excitation carry none; six hours covers several orbits
 * of a low orbit, so a loop that is exercised at all within that span shows a value (common practice
 * for an at-a-glance figure: show the newest valid value with its age rather than a blank).
 */
export const EFFECTIVENESS_LOOKBACK_H = 6;
