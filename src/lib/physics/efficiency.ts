/*
 * Efficiency figures of a loop per window: how much torque, and how much stored momentum, each watt of
 * electrical input buys. Electrical input is the mean of V·I at the electrode taps.
 */

/** Torque per watt, N·m/W: mean |τ_fluid| / mean electrical power; null when the power is not positive. */
export function torquePerWatt(meanAbsTorque_Nm: number, meanPower_w: number): number | null {
  return meanPower_w > 0 && Number.isFinite(meanAbsTorque_Nm) ? meanAbsTorque_Nm / meanPower_w : null;
}

/** Momentum held per watt, N·m·s/W: mean |h| / mean electrical power; null when the power is not positive. */
export function momentumPerWatt(meanAbsMomentum_Nms: number, meanPower_w: number): number | null {
  return meanPower_w > 0 && Number.isFinite(meanAbsMomentum_Nms) ? meanAbsMomentum_Nms / meanPower_w : null;
}
