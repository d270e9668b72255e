/**
 * Identification dither of the loop currents. Left to itself the attitude controller holds a loop
 * at a nearly constant current between slews, and a constant current cannot tell the pump's torque
 * constant from the loop's losses: in steady flow kT·I = τ_loss(v), so I and v move together. As
 * spacecraft do for on-orbit actuator calibration, the on-board software therefore adds a small,
 * zero-mean excitation to each loop's current command: a multi-sine, here the 2nd, 3rd and 4th
 * harmonics of a repeat period P (Pintelon & Schoukens, System Identification: A Frequency Domain
 * Approach, 2001, from memory), with Schroeder's phases φ_k = −π k(k − 1)/K for the k-th of the
 * K = 3 lines to keep the crest factor low (Schroeder, "Synthesis of low-peak-factor signals and
 * binary sequences with low autocorrelation", IEEE Trans. Inf. Theory 16:85, 1970, from memory),
 * scaled so that its peak is ±a·I_rated.
 *
 * Why these frequencies. With P = 12 s the lines sit at 6, 4 and 3 s, around the flow's own time
 * constant (ρL over the loss slope, about 1 s for the demo loops) and well inside what the ground's
 * 2 s smoothing of the fit passes: there the fluid's inertia makes dh/dt differ from kT·I, so the
 * torque constant separates from the losses. A multi-sine has no power at or near zero frequency,
 * so it stores no momentum on average and the loss feed-forward of the controller cannot wind it up;
 * its mean over every whole repeat period is exactly zero (60 s windows hold five).
 *
 * What it does to the body: the fluid's momentum swings by about η·kT·i_k/ω_k per line and the body
 * takes the opposite. At the default 15 % the body rate jitters by about 1.6·10⁻³ rad/s and the pointing
 * by about ±0.1° on the two lighter demo spacecraft, 3·10⁻⁴ rad/s and ±0.02° on the three-loop one
 * (our own simulation runs, half-hour spans). The dither is well above the attitude
 * controller's bandwidth (0.3 rad/s), which lets it pass; the controller and the magnetic torquer
 * keep the mean attitude and rates. The slew-complete test asks for the attitude error to stay inside
 * its band for a dwell time, and the unload decision looks at the smoothed stored momentum.
 */

/** Harmonics of the repeat period that carry the dither. */
export const EXCITATION_HARMONICS = [2, 3, 4] as const;

/** Excitation settings of one loop. */
export interface ExcitationSettings {
  /** Peak of the dither, A (a fraction of the rated current). */
  amplitude_A: number;
  /** Repeat period P of the multi-sine, s. */
  period_s: number;
  /** Time shift of this loop's waveform, s (loops of one spacecraft run at different shifts). */
  shift_s: number;
}

const K = EXCITATION_HARMONICS.length;
const PHASES = EXCITATION_HARMONICS.map((_, i) => (-Math.PI * (i + 1) * i) / K);

/** Unit multi-sine Σ sin(2π k u + φ_k) at u = t/P (periodic in u with period 1). */
function unitWave(u: number): number {
  let s = 0;
  for (let i = 0; i < K; i++) s += Math.sin(2 * Math.PI * EXCITATION_HARMONICS[i]! * u + PHASES[i]!);
  return s;
}

/** Peak |Σ sin(2π k u + φ_k)| over one period, found on a fine grid and refined by golden section. */
function unitPeak(): number {
  const n = 4096;
  let best = 0, at = 0;
  for (let j = 0; j < n; j++) {
    const v = Math.abs(unitWave(j / n));
    if (v > best) { best = v; at = j / n; }
  }
  let lo = at - 1 / n, hi = at + 1 / n;
  const g = (Math.sqrt(5) - 1) / 2;
  for (let it = 0; it < 60; it++) {
    const a = hi - g * (hi - lo), b = lo + g * (hi - lo);
    if (Math.abs(unitWave(a)) > Math.abs(unitWave(b))) hi = b;
    else lo = a;
  }
  return Math.max(best, Math.abs(unitWave((lo + hi) / 2)));
}

const UNIT_PEAK = unitPeak();

/** The dither of one loop: a multi-sine of peak ±amplitude. */
export class LoopExcitation {
  private readonly scale: number;
  private readonly s: ExcitationSettings;

  constructor(settings: ExcitationSettings) {
    this.s = settings;
    this.scale = settings.amplitude_A > 0 && settings.period_s > 0 ? settings.amplitude_A / UNIT_PEAK : 0;
  }

  /** Dither current at t (s from the scenario start), A. */
  at(t_s: number): number {
    if (this.scale === 0) return 0;
    return this.scale * unitWave((t_s + this.s.shift_s) / this.s.period_s);
  }

  /** Amplitude of each harmonic line, A. */
  get lineAmplitude_A(): number {
    return this.scale;
  }
}
