/** The cautions the product shows, word for word; one place so every page says the same. */

/** Shown on every signed-in page and in every printed report. */
export const FLIGHT_RULES_CAUTION =
  "Trips and estimates support the flight team's decisions; they do not replace the mission's flight rules or the judgement of the responsible engineer. Commanding the spacecraft is out of scope.";

/** Shown where hardware handling comes up: loop geometry on the sheets, and readings that point at electrodes or wetting. */
export const HANDLING_CAUTION =
  "The eutectic gallium alloy in the loops attacks aluminium and many other metals; ground handling of hardware follows the laboratory's own safety rules and local regulations.";
