import type { SheetLoop, SpacecraftSheet } from '../spacecraft-sheet.schema';
import { lossTorqueFunction, mhdPressureLoss } from './friction';
import { predictNextTemperature, timeToLimit, fitThermalModel, type ThermalFit } from './heating';
import { loopGeometry, momentumPerVelocity, type LoopGeometry } from './loop-geometry';
import { forecastSaturation, momentumCapacity } from './momentum';
import { backEmf, idealPressureConstant, idealTorqueConstant } from './pump';
import { compareSpectra, findPeaks, waterfall, welchPsd, type PeakOptions, type Psd, type SpectralPeak, type SpectrumComparison, type Waterfall, type WelchOptions } from './pulsation';
import { theilSen } from './robust';
import { compensateMagnetTemperature, fitPressureConstant, fitTorqueConstant, torqueFitSeries } from './torque-constant';
import { interpolateAddAlongAxis, medianSpacing, sgOverTime, uniformSegments } from './torque';
import { momentumPerWatt, torquePerWatt } from './efficiency';
import type { Vec3 } from './vector3';

export { baselineStats, detectDrift, ewmaChart, cusumChart } from './drift';
export type { BaselineStats, DriftOptions, DriftReport, EwmaChart, CusumChart } from './drift';

/** A sampled channel: single or double precision. */
export type Samples = Float32Array | Float64Array;

/** Attitude housekeeping of a span, ascending in time. */
export interface AttitudeInput {
  /** Sample times, Unix seconds. */
  t_s: Float64Array;
  /** Gyro body rates, rad/s. */
  rate_x: Samples;
  rate_y: Samples;
  rate_z: Samples;
  /** Magnetometer, body frame, nT. */
  mag_x: Samples;
  mag_y: Samples;
  mag_z: Samples;
}

/** Housekeeping of one loop over a span, ascending in time. */
export interface LoopInput {
  loopId: number;
  /** Sample times, Unix seconds. */
  t_s: Float64Array;
  /** Measured pump current, A. */
  current_a: Samples;
  /** Electrode voltage, V. */
  voltage_v: Samples;
  /** Mean flow velocity, m/s, signed along the loop's positive sense. */
  flow_m_s: Samples;
  /** Pressure rise across the pump stations, Pa. */
  pressure_pa: Samples;
  fluidTemp_c: Samples;
  electrodeTemp_c: Samples;
  magnetTemp_c: Samples;
  /** Commanded pump current, A. */
  commanded_a: Samples;
}

/** One burst capture in physical units. */
export interface BurstInput {
  loopId: number;
  /** Time of the first sample, Unix seconds. */
  t_s: number;
  sampleRate_hz: number;
  /** 0 pump pressure rise (Pa), 1 measured pump current (A). */
  channel: 0 | 1;
  values: Float32Array;
}

/** Everything analyseSpan reads. */
export interface SpanInput {
  attitude: AttitudeInput;
  loops: LoopInput[];
  bursts: BurstInput[];
}

/** A stored spectrum to compare a loop channel's bursts with. */
export interface PulsationBaseline {
  loopId: number;
  channel: 0 | 1;
  psd: Psd;
}

/** Settings of analyseSpan; every field has a default. */
export interface AnalysisOptions {
  /** Window length, s (default 60). Windows are aligned to multiples of it in Unix time. */
  window_s?: number;
  /** Savitzky–Golay derivative: half-width in samples and polynomial order (default 10, 2: 2.1 s at 10 Hz). */
  sgHalfWidth?: number;
  sgOrder?: number;
  /** A sampling step longer than this × the median step is a gap (default 1.5). */
  gapFactor?: number;
  /** kT is fitted only when the current's std over the window reaches this, A (default 2 % of rated). */
  minCurrentStd_a?: number;
  /** Fit an intercept in the kT model (default false). */
  fitIntercept?: boolean;
  /** Magnet reference temperature for compensation, °C (default 20). */
  magnetRefTemp_c?: number;
  /** Remanence temperature coefficient, 1/K (default 0.001). */
  magnetTempCoeff_per_k?: number;
  /** Resistance is formed only at RMS current at least this, A (default 5 % of rated). */
  minRmsCurrent_a?: number;
  /** Windows used for the saturation forecast (default 10). */
  saturationWindows?: number;
  /** Electrode temperature limit for the time-to-limit forecast, °C (default 70, an adjustable working value). */
  electrodeTempLimit_c?: number;
  welch?: WelchOptions;
  peaks?: PeakOptions;
  /** Stored baseline spectra; without one a loop channel's first burst in the span is its baseline. */
  pulsationBaselines?: PulsationBaseline[];
}

/** One loop over one window: the row the scheduler stores. Null where a figure could not be formed. */
export interface LoopWindow {
  loopId: number;
  /** Window start and end, Unix s ([start, end)). */
  start_s: number;
  end_s: number;
  samples: number;
  currentMean_a: number | null;
  currentStd_a: number | null;
  commandedMean_a: number | null;
  flowMean_m_s: number | null;
  /** Fitted torque constant, N·m/A, and its standard error (null when the current did not vary enough). */
  kT_Nm_per_a: number | null;
  kTStdErr_Nm_per_a: number | null;
  /** kT / ideal kT of the sheet, and its standard error. */
  effectiveness: number | null;
  effectivenessStdErr: number | null;
  /** Effectiveness referred to the magnet reference temperature. */
  compensatedEffectiveness: number | null;
  /**
   * Fitted Δp/I from the pressure channel with the pump gaps' MHD loss added back (the taps report the
   * rise less that loss), Pa/A, its standard error, and its ratio to the ideal (the pump effectiveness η).
   */
  pressureConstant_pa_per_a: number | null;
  pressureConstantStdErr_pa_per_a: number | null;
  pressureEffectiveness: number | null;
  /** Mean reported pressure rise (as measured, MHD loss not added back), Pa. */
  pressureMean_pa: number | null;
  /** Electrode-circuit resistance with the back-EMF removed, Ω. */
  resistance_ohm: number | null;
  /** Mean Joule power (V − E)·I, W. */
  joulePower_w: number | null;
  /** Mean electrical input V·I, W. */
  electricalPower_w: number | null;
  fluidTempMean_c: number | null;
  electrodeTempMean_c: number | null;
  magnetTempMean_c: number | null;
  /** Slope of electrode temperature over the window, K/s. */
  rateOfRise_k_s: number | null;
  /** Measured − predicted window-mean electrode temperature (one step of the fitted thermal model), K. */
  thermalResidual_k: number | null;
  /** Time for the electrode to reach the limit at this window's power (0 already there, null never), s. */
  timeToTempLimit_s: number | null;
  /** Loop momentum along its axis: mean (signed), mean |h| and max |h|, N·m·s. */
  momentumMean_Nms: number | null;
  momentumAbsMean_Nms: number | null;
  momentumMaxAbs_Nms: number | null;
  /** 100·mean|h| / capacity at rated current, %. */
  marginInUse_pct: number | null;
  /** Time until |h| reaches capacity on the trend of the last windows (null when not rising), s. */
  timeToSaturation_s: number | null;
  /** Mean fluid torque dh/dt + τ_loss (signed) and mean |·|, N·m. */
  fluidTorqueMean_Nm: number | null;
  fluidTorqueAbsMean_Nm: number | null;
  /** Mean |fluid torque| per electrical watt, N·m/W. */
  torquePerWatt_Nm_per_w: number | null;
  /** Mean |h| per electrical watt, N·m·s/W. */
  momentumPerWatt_Nms_per_w: number | null;
}

/** Whole-body figures over one window (body frame). Vectors are null when there were no usable samples. */
export interface BodyWindow {
  start_s: number;
  end_s: number;
  samples: number;
  rateMean_rad_s: Vec3 | null;
  /** I ω, N·m·s. */
  bodyMomentum_Nms: Vec3 | null;
  /** Σ h_i n̂_i, N·m·s. */
  loopMomentum_Nms: Vec3 | null;
  /** I ω + Σ h_i n̂_i and its magnitude, N·m·s. */
  systemMomentum_Nms: Vec3 | null;
  systemMomentumMagnitude_Nms: number | null;
  /** τ_body = I ω̇ + ω × (I ω + h), N·m. */
  bodyTorque_Nm: Vec3 | null;
  /** Σ ḣ_i n̂_i, N·m. */
  loopTorque_Nm: Vec3 | null;
  /** Ledger τ_body + Σ ḣ = τ_ext estimate, N·m, with the standard error of each component's window mean. */
  ledgerResidual_Nm: Vec3 | null;
  ledgerStdErr_Nm: Vec3 | null;
  ledgerResidualMagnitude_Nm: number | null;
  /** Samples that had loop data for every loop. */
  ledgerSamples: number;
  /** Mean magnitude of the measured field, nT. */
  magField_nT: number | null;
}

/** Pulsation analysis of one burst. */
export interface BurstAnalysis {
  loopId: number;
  channel: 0 | 1;
  t_s: number;
  sampleRate_hz: number;
  samples: number;
  mean: number;
  rms: number;
  psd: Psd;
  peaks: SpectralPeak[];
  /** Against the supplied baseline, or the first burst of this loop channel in the span; null for that first burst. */
  comparison: (SpectrumComparison & { baseline: 'supplied' | 'first-in-span' }) | null;
}

/** Robust trend of the window resistance. */
export interface ResistanceTrend {
  /** Theil–Sen slope, Ω/s. */
  slope_ohm_per_s: number;
  /** Fitted resistance at the span start, Ω. */
  atStart_ohm: number;
  n: number;
}

/** A loop over the whole span. */
export interface LoopSpanAnalysis {
  loopId: number;
  geometry: LoopGeometry;
  idealTorqueConstant_Nm_per_a: number;
  idealPressureConstant_pa_per_a: number;
  /** |h| of steady flow at rated current, N·m·s. */
  momentumCapacity_Nms: number;
  windows: LoopWindow[];
  /** First-order electrode thermal model fitted over the span's windows. */
  thermalModel: ThermalFit | null;
  resistanceTrend: ResistanceTrend | null;
}

/** Result of analyseSpan. */
export interface SpanAnalysis {
  window_s: number;
  /** First window start and last window end, Unix s. */
  start_s: number;
  end_s: number;
  loops: LoopSpanAnalysis[];
  body: BodyWindow[];
  bursts: BurstAnalysis[];
  waterfalls: { loopId: number; channel: 0 | 1; waterfall: Waterfall }[];
  /** Loop ids present in the input but not on the sheet (not analysed). */
  skippedLoopIds: number[];
}

const fin = (x: number): number | null => (Number.isFinite(x) ? x : null);
const finVec = (x: number, y: number, z: number): Vec3 | null =>
  Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(z) ? [x, y, z] : null;

interface Group { w: number; from: number; to: number }

/** Consecutive runs of samples in the same window index (times ascending). */
function windowGroups(t: ArrayLike<number>, origin: number, w: number): Group[] {
  const out: Group[] = [];
  const n = t.length;
  let from = 0;
  while (from < n) {
    const wi = Math.floor((t[from]! - origin) / w);
    const edge = origin + (wi + 1) * w;
    let to = from + 1;
    while (to < n && t[to]! < edge) to++;
    out.push({ w: wi, from, to });
    from = to;
  }
  return out;
}

/** h = k_h·v, ḣ = k_h·v̇ (written over v̇'s buffer) and τ_loss(v) per sample. */
function momentumAndLoss(flow: Samples, vdot: Float64Array, kh: number, loss: (v: number) => number) {
  const n = flow.length;
  const h = new Float64Array(n), hdot = vdot, tauLoss = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const v = flow[i]!;
    h[i] = kh * v;
    hdot[i] = kh * vdot[i]!;
    tauLoss[i] = loss(v);
  }
  return { h, hdot, tauLoss };
}

/** Slots of the window sums of one loop (sums s…, counts n…). */
const S = {
  I: 0, II: 1, nI: 2, H: 3, AbsH: 4, maxAbsH: 5, nH: 6, Tau: 7, AbsTau: 8, nTau: 9, P: 10, nP: 11, Cmd: 12, nCmd: 13,
  V: 14, nV: 15, Mag: 16, nMag: 17, Dp: 18, nDp: 19, Tf: 20, nTf: 21, rxy: 22, rxx: 23, nR: 24, J: 25, nJ: 26,
  tN: 27, tS: 28, tT: 29, tSS: 30, tST: 31, size: 32,
} as const;

/** The count slots: with every sample finite, each equals the window's sample count. */
const COUNT_SLOTS = [S.nI, S.nH, S.nTau, S.nP, S.nV, S.nR, S.nJ, S.nCmd, S.nMag, S.nDp, S.nTf, S.tN] as const;

/**
 * One pass over samples [a, b) of a loop for its window sums, into `acc` (slots S). The fast pass assumes
 * finite samples (the telemetry contract rejects non-finite values); if any sum comes out non-finite the
 * window is summed again sample by sample with checks. Heating uses (V − E) against I, E the back-EMF
 * (as heating.ts windowResistance and meanJoulePower). Kept small and separate so that it is optimised
 * on its own after a few windows.
 */
function windowSums(L: LoopInput, h: Float64Array, hdot: Float64Array, tauLoss: Float64Array, emfPerV: number, a: number, b: number, acc: Float64Array): Float64Array {
  const cur = L.current_a, volt = L.voltage_v, flow = L.flow_m_s, te_ = L.electrodeTemp_c, t = L.t_s;
  const cmd = L.commanded_a, mag = L.magnetTemp_c, dpr = L.pressure_pa, tfl = L.fluidTemp_c;
  let sI = 0, sII = 0, sH = 0, sAbsH = 0, maxAbsH = 0, sTau = 0, sAbsTau = 0, sP = 0, sV = 0;
  let sCmd = 0, sMag = 0, sDp = 0, sTf = 0, rxy = 0, sJ = 0, tS = 0, tT = 0, tSS = 0, tST = 0;
  const t0 = t[a]!;
  for (let i = a; i < b; i++) {
    const I = cur[i]!, V = volt[i]!, v = flow[i]!, hi = h[i]!, ti = hdot[i]! + tauLoss[i]!;
    const ah = Math.abs(hi), vr = V - emfPerV * v, te = te_[i]!, dt = t[i]! - t0;
    sI += I; sII += I * I; sH += hi; sAbsH += ah; if (ah > maxAbsH) maxAbsH = ah;
    sTau += ti; sAbsTau += Math.abs(ti); sP += V * I; sV += v;
    rxy += vr * I;
    sCmd += cmd[i]!; sMag += mag[i]!; sDp += dpr[i]!; sTf += tfl[i]!;
    tS += dt; tT += te; tSS += dt * dt; tST += dt * te;
  }
  sJ = rxy;
  const cnt = b - a;
  if (Number.isFinite(sI + sII + sH + sAbsH + sTau + sAbsTau + sP + sV + rxy + sCmd + sMag + sDp + sTf + tS + tT + tSS + tST)) {
    acc[S.I] = sI; acc[S.II] = sII; acc[S.H] = sH; acc[S.AbsH] = sAbsH; acc[S.maxAbsH] = maxAbsH; acc[S.Tau] = sTau; acc[S.AbsTau] = sAbsTau;
    acc[S.P] = sP; acc[S.V] = sV; acc[S.Cmd] = sCmd; acc[S.Mag] = sMag; acc[S.Dp] = sDp; acc[S.Tf] = sTf;
    acc[S.rxy] = rxy; acc[S.rxx] = sII; acc[S.J] = sJ; acc[S.tS] = tS; acc[S.tT] = tT; acc[S.tSS] = tSS; acc[S.tST] = tST;
    for (const k of COUNT_SLOTS) acc[k] = cnt;
    return acc;
  }
  acc.fill(0);
  const add = (k: number, x: number) => { acc[k] = acc[k]! + x; };
  for (let i = a; i < b; i++) {
    const I = cur[i]!, V = volt[i]!, v = flow[i]!;
    if (Number.isFinite(I)) { add(S.I, I); add(S.II, I * I); add(S.nI, 1); }
    const hi = h[i]!;
    if (Number.isFinite(hi)) { const ah = Math.abs(hi); add(S.H, hi); add(S.AbsH, ah); if (ah > acc[S.maxAbsH]!) acc[S.maxAbsH] = ah; add(S.nH, 1); }
    const ti = hdot[i]! + tauLoss[i]!;
    if (Number.isFinite(ti)) { add(S.Tau, ti); add(S.AbsTau, Math.abs(ti)); add(S.nTau, 1); }
    const p = V * I;
    if (Number.isFinite(p)) { add(S.P, p); add(S.nP, 1); }
    if (Number.isFinite(v)) { add(S.V, v); add(S.nV, 1); }
    const vr = V - emfPerV * v;
    if (Number.isFinite(vr * I)) { add(S.rxy, vr * I); add(S.rxx, I * I); add(S.nR, 1); add(S.J, vr * I); add(S.nJ, 1); }
    const c = cmd[i]!; if (Number.isFinite(c)) { add(S.Cmd, c); add(S.nCmd, 1); }
    const m = mag[i]!; if (Number.isFinite(m)) { add(S.Mag, m); add(S.nMag, 1); }
    const dp = dpr[i]!; if (Number.isFinite(dp)) { add(S.Dp, dp); add(S.nDp, 1); }
    const tf = tfl[i]!; if (Number.isFinite(tf)) { add(S.Tf, tf); add(S.nTf, 1); }
    const te = te_[i]!, dt = t[i]! - t0;
    if (Number.isFinite(te)) { add(S.tN, 1); add(S.tS, dt); add(S.tT, te); add(S.tSS, dt * dt); add(S.tST, dt * te); }
  }
  return acc;
}

function analyseLoop(L: LoopInput, loop: SheetLoop, origin: number, o: Required<Pick<AnalysisOptions, 'window_s' | 'sgHalfWidth' | 'sgOrder' | 'gapFactor' | 'fitIntercept' | 'magnetRefTemp_c' | 'magnetTempCoeff_per_k' | 'saturationWindows' | 'electrodeTempLimit_c'>> & AnalysisOptions) {
  const W = o.window_s;
  const n = L.t_s.length;
  const kh = momentumPerVelocity(loop);
  const loss = lossTorqueFunction(loop);
  const step = medianSpacing(L.t_s);
  const segs = uniformSegments(L.t_s, o.gapFactor, step);
  const vdot = sgOverTime(L.t_s, L.flow_m_s, { halfWidth: o.sgHalfWidth, order: o.sgOrder, derivative: 1 }, segs);
  // vdot's buffer becomes ḣ; the fluid torque ḣ + τ_loss is formed where needed
  const { h, hdot, tauLoss } = momentumAndLoss(L.flow_m_s, vdot, kh, loss);
  const fitSeries = torqueFitSeries(h, L.current_a, L.flow_m_s, tauLoss, segs, o.sgHalfWidth);
  const kTIdeal = idealTorqueConstant(loop);
  const kpIdeal = idealPressureConstant(loop);
  const capacity = momentumCapacity(loop);
  const minStd = o.minCurrentStd_a ?? 0.02 * loop.ratedCurrent_A;
  const minRms = o.minRmsCurrent_a ?? 0.05 * loop.ratedCurrent_A;
  const emfPerV = backEmf(1, loop);
  // the pressure taps see the Lorentz rise less the gap's MHD loss; it is added back before kp is fitted
  const mhdPerV = mhdPressureLoss(1, loop);
  const groups = windowGroups(L.t_s, origin, W);
  const rows: LoopWindow[] = [];
  const absHMean: number[] = [], mid: number[] = [];
  const acc = new Float64Array(S.size);
  for (const g of groups) {
    const { from: a, to: b } = g;
    const q = windowSums(L, h, hdot, tauLoss, emfPerV, a, b, acc);
    const sI = q[S.I]!, sII = q[S.II]!, nI = q[S.nI]!, sH = q[S.H]!, sAbsH = q[S.AbsH]!, maxAbsH = q[S.maxAbsH]!, nH = q[S.nH]!;
    const sTau = q[S.Tau]!, sAbsTau = q[S.AbsTau]!, nTau = q[S.nTau]!, sP = q[S.P]!, nP = q[S.nP]!, sCmd = q[S.Cmd]!, nCmd = q[S.nCmd]!;
    const sV = q[S.V]!, nV = q[S.nV]!, sMag = q[S.Mag]!, nMag = q[S.nMag]!, sDp = q[S.Dp]!, nDp = q[S.nDp]!, sTf = q[S.Tf]!, nTf = q[S.nTf]!;
    const rxy = q[S.rxy]!, rxx = q[S.rxx]!, nR = q[S.nR]!, sJ = q[S.J]!, nJ = q[S.nJ]!;
    const tN = q[S.tN]!, tS = q[S.tS]!, tT = q[S.tT]!, tSS = q[S.tSS]!, tST = q[S.tST]!;
    const avg = (sum: number, count: number) => (count > 0 ? sum / count : Number.NaN);
    const Imean = nI > 0 ? sI / nI : Number.NaN;
    const Istd = nI > 1 ? Math.sqrt(Math.max(0, (sII - nI * Imean * Imean) / (nI - 1))) : Number.NaN;
    const resistance = nR > 0 && rxx > 0 && Math.sqrt(rxx / nR) >= minRms ? rxy / rxx : null;
    const sxx = tSS - (tS * tS) / tN;
    const riseSlope = tN >= 2 && sxx > 0 ? (tST - (tS * tT) / tN) / sxx : Number.NaN;
    const kfit = fitTorqueConstant(fitSeries.current, fitSeries.flow, fitSeries.fluidTorque, { minCurrentStd_a: minStd, intercept: o.fitIntercept, clusterLength: 2 * (2 * o.sgHalfWidth + 1) }, a, b, fitSeries.flowAbsFlow);
    const pfit = fitPressureConstant(L.current_a, L.pressure_pa, minStd, a, b, 20, L.flow_m_s, mhdPerV);
    const magT = avg(sMag, nMag);
    const eff = kfit ? kfit.kT / kTIdeal : null;
    const pElec = nP > 0 ? sP / nP : Number.NaN;
    const absH = nH > 0 ? sAbsH / nH : Number.NaN;
    const absTau = nTau > 0 ? sAbsTau / nTau : Number.NaN;
    const start = origin + g.w * W;
    rows.push({
      loopId: L.loopId,
      start_s: start,
      end_s: start + W,
      samples: b - a,
      currentMean_a: fin(Imean),
      currentStd_a: fin(Istd),
      commandedMean_a: fin(avg(sCmd, nCmd)),
      flowMean_m_s: fin(avg(sV, nV)),
      kT_Nm_per_a: kfit ? fin(kfit.kT) : null,
      kTStdErr_Nm_per_a: kfit ? fin(kfit.kTStdErr) : null,
      effectiveness: eff === null ? null : fin(eff),
      effectivenessStdErr: kfit ? fin(kfit.kTStdErr / kTIdeal) : null,
      compensatedEffectiveness:
        eff === null || !Number.isFinite(magT) ? null : fin(compensateMagnetTemperature(eff, magT, o.magnetRefTemp_c, o.magnetTempCoeff_per_k)),
      pressureConstant_pa_per_a: pfit ? fin(pfit.kp) : null,
      pressureConstantStdErr_pa_per_a: pfit ? fin(pfit.kpStdErr) : null,
      pressureEffectiveness: pfit ? fin(pfit.kp / kpIdeal) : null,
      pressureMean_pa: fin(avg(sDp, nDp)),
      resistance_ohm: resistance === null ? null : fin(resistance),
      joulePower_w: fin(avg(sJ, nJ)),
      electricalPower_w: fin(pElec),
      fluidTempMean_c: fin(avg(sTf, nTf)),
      electrodeTempMean_c: fin(avg(tT, tN)),
      magnetTempMean_c: fin(magT),
      rateOfRise_k_s: fin(riseSlope),
      thermalResidual_k: null,
      timeToTempLimit_s: null,
      momentumMean_Nms: fin(nH > 0 ? sH / nH : Number.NaN),
      momentumAbsMean_Nms: fin(absH),
      momentumMaxAbs_Nms: nH > 0 ? maxAbsH : null,
      marginInUse_pct: fin((100 * absH) / capacity),
      timeToSaturation_s: null,
      fluidTorqueMean_Nm: fin(nTau > 0 ? sTau / nTau : Number.NaN),
      fluidTorqueAbsMean_Nm: fin(absTau),
      torquePerWatt_Nm_per_w: torquePerWatt(absTau, pElec),
      momentumPerWatt_Nms_per_w: momentumPerWatt(absH, pElec),
    });
    absHMean.push(absH);
    mid.push(start + W / 2);
    const fc = forecastSaturation(mid, absHMean, capacity, o.saturationWindows);
    rows[rows.length - 1]!.timeToSaturation_s = fc ? fin(fc.timeToSaturation_s) : null;
  }

  // Thermal model on window means of electrode temperature and Joule power, one window per step. The mean
  // temperatures of windows k and k+1 sit one window apart and between them half of each window's power
  // acts, so the step k → k+1 is driven by (P_k + P_{k+1})/2 (exact in the limit τ ≫ window).
  const T = rows.map((r) => r.electrodeTempMean_c ?? Number.NaN);
  const P = rows.map((r) => r.joulePower_w ?? Number.NaN);
  // only steps between adjacent, (nearly) full windows: a part-filled window's mean is not at its centre
  const expected = W / step;
  const full = groups.map((g) => g.to - g.from >= 0.9 * expected);
  const valid = groups.map((g, k) => (k + 1 < groups.length && groups[k + 1]!.w === g.w + 1 && full[k] && full[k + 1] ? 1 : 0));
  const Pstep = P.map((p, k) => (valid[k] ? 0.5 * (p + P[k + 1]!) : Number.NaN));
  const thermal = fitThermalModel(T, Pstep, W, valid);
  if (thermal) {
    rows.forEach((r, k) => {
      if (k > 0 && valid[k - 1] && Number.isFinite(T[k - 1]!) && Number.isFinite(Pstep[k - 1]!) && Number.isFinite(T[k]!)) {
        r.thermalResidual_k = fin(T[k]! - predictNextTemperature(thermal, T[k - 1]!, Pstep[k - 1]!, W));
      }
      if (Number.isFinite(T[k]!) && Number.isFinite(P[k]!)) {
        const ttl = timeToLimit(thermal, P[k]!, T[k]!, o.electrodeTempLimit_c);
        r.timeToTempLimit_s = ttl === null ? null : fin(ttl);
      }
    });
  }

  const rx: number[] = [], ry: number[] = [];
  const spanStart = rows.length > 0 ? rows[0]!.start_s : origin;
  for (const r of rows) if (r.resistance_ohm !== null) { rx.push(r.start_s + W / 2 - spanStart); ry.push(r.resistance_ohm); }
  const ts = rx.length >= 2 ? theilSen(rx, ry) : null;

  const result: LoopSpanAnalysis = {
    loopId: L.loopId,
    geometry: loopGeometry(loop),
    idealTorqueConstant_Nm_per_a: kTIdeal,
    idealPressureConstant_pa_per_a: kpIdeal,
    momentumCapacity_Nms: capacity,
    windows: rows,
    thermalModel: thermal,
    resistanceTrend: ts ? { slope_ohm_per_s: ts.slope, atStart_ohm: ts.intercept, n: ts.n } : null,
  };
  return { result, h, hdot, maxStep: o.gapFactor * step };
}

const ACC_SIZE = 27;

/** Per-sample series of the body pass. */
interface BodySeries {
  A: AttitudeInput;
  /** ω̇ from the Savitzky–Golay derivative. */
  wdx: Float64Array; wdy: Float64Array; wdz: Float64Array;
  /** Σ h_i n̂_i and Σ ḣ_i n̂_i interpolated to the attitude times. */
  hx: Float64Array; hy: Float64Array; hz: Float64Array;
  dx: Float64Array; dy: Float64Array; dz: Float64Array;
}

/**
 * Folds samples [from, to) of the body pass into `acc` (ACC_SIZE sums): body momentum, loop momentum,
 * τ_body = I ω̇ + ω × (I ω + h), the ledger and the field magnitude. Separate so that it is optimised on its own.
 */
function bodyWindowSums(s: BodySeries, inertia: readonly number[], from: number, to: number, acc: Float64Array): void {
  const [i00, i01, i02, i10, i11, i12, i20, i21, i22] = inertia as [number, number, number, number, number, number, number, number, number];
  const rx = s.A.rate_x, ry = s.A.rate_y, rz = s.A.rate_z, mgx = s.A.mag_x, mgy = s.A.mag_y, mgz = s.A.mag_z;
  const { wdx, wdy, wdz, hx, hy, hz, dx, dy, dz } = s;
  acc.fill(0);
  for (let i = from; i < to; i++) {
    const wx = rx[i]!, wy = ry[i]!, wz = rz[i]!;
    const Hx = i00 * wx + i01 * wy + i02 * wz, Hy = i10 * wx + i11 * wy + i12 * wz, Hz = i20 * wx + i21 * wy + i22 * wz;
    if (Number.isFinite(Hx + Hy + Hz)) {
      acc[0]!++; acc[1]! += wx; acc[2]! += wy; acc[3]! += wz; acc[4]! += Hx; acc[5]! += Hy; acc[6]! += Hz;
    }
    const lx = hx[i]!, ly = hy[i]!, lz = hz[i]!;
    if (Number.isFinite(lx + ly + lz + Hx + Hy + Hz)) { acc[7]!++; acc[8]! += lx; acc[9]! += ly; acc[10]! += lz; }
    // τ_body = I ω̇ + ω × (I ω + h)
    const ax = wdx[i]!, ay = wdy[i]!, az = wdz[i]!;
    const Tx = Hx + lx, Ty = Hy + ly, Tz = Hz + lz;
    const tx = i00 * ax + i01 * ay + i02 * az + (wy * Tz - wz * Ty);
    const ty = i10 * ax + i11 * ay + i12 * az + (wz * Tx - wx * Tz);
    const tz = i20 * ax + i21 * ay + i22 * az + (wx * Ty - wy * Tx);
    if (Number.isFinite(tx + ty + tz)) { acc[11]!++; acc[12]! += tx; acc[13]! += ty; acc[14]! += tz; }
    const ex = tx + dx[i]!, ey = ty + dy[i]!, ez = tz + dz[i]!;
    if (Number.isFinite(ex + ey + ez)) {
      acc[15]!++; acc[16]! += dx[i]!; acc[17]! += dy[i]!; acc[18]! += dz[i]!;
      acc[19]! += ex; acc[20]! += ey; acc[21]! += ez; acc[22]! += ex * ex; acc[23]! += ey * ey; acc[24]! += ez * ez;
    }
    const mx = mgx[i]!, my = mgy[i]!, mz = mgz[i]!;
    const b = Math.sqrt(mx * mx + my * my + mz * mz);
    if (Number.isFinite(b)) { acc[25]!++; acc[26]! += b; }
  }
}

function analyseBody(
  A: AttitudeInput,
  sheet: SpacecraftSheet,
  loops: { axis: Vec3; t_s: Float64Array; h: Float64Array; hdot: Float64Array; maxStep: number }[],
  origin: number,
  o: { window_s: number; sgHalfWidth: number; sgOrder: number; gapFactor: number },
): BodyWindow[] {
  const n = A.t_s.length;
  if (n === 0) return [];
  const I = sheet.massProperties.inertia_kg_m2;
  const [i00, i01, i02] = I[0], [i10, i11, i12] = I[1], [i20, i21, i22] = I[2];
  const segs = uniformSegments(A.t_s, o.gapFactor);
  const sg = { halfWidth: o.sgHalfWidth, order: o.sgOrder, derivative: 1 };
  const wdx = sgOverTime(A.t_s, A.rate_x, sg, segs);
  const wdy = sgOverTime(A.t_s, A.rate_y, sg, segs);
  const wdz = sgOverTime(A.t_s, A.rate_z, sg, segs);
  const hx = new Float64Array(n), hy = new Float64Array(n), hz = new Float64Array(n);
  const dx = new Float64Array(n), dy = new Float64Array(n), dz = new Float64Array(n);
  for (const l of loops) interpolateAddAlongAxis(l.t_s, l.h, l.hdot, A.t_s, l.axis, l.maxStep, hx, hy, hz, dx, dy, dz);
  const corr = 2 * o.sgHalfWidth + 1;
  const W = o.window_s;
  const rows: BodyWindow[] = [];
  // one pass: per-sample figures folded straight into the window's sums
  const acc = new Float64Array(ACC_SIZE);
  const series: BodySeries = { A, wdx, wdy, wdz, hx, hy, hz, dx, dy, dz };
  const inertia = [i00, i01, i02, i10, i11, i12, i20, i21, i22] as const;
  for (const g of windowGroups(A.t_s, origin, W)) {
    bodyWindowSums(series, inertia, g.from, g.to, acc);
    const v3 = (c: number, k: number): Vec3 | null => (acc[c]! > 0 ? finVec(acc[k]! / acc[c]!, acc[k + 1]! / acc[c]!, acc[k + 2]! / acc[c]!) : null);
    const body = v3(0, 4), loopH = v3(7, 8);
    const sys = body && loopH ? ([body[0] + loopH[0], body[1] + loopH[1], body[2] + loopH[2]] as Vec3) : null;
    const nl = acc[15]!;
    const ledger = v3(15, 19);
    // standard error of the window mean with n_eff = n / filter length (filtered samples are correlated)
    const se = (k: number) => {
      if (nl < 2) return Number.NaN;
      const m = acc[k]! / nl;
      const sd = Math.sqrt(Math.max(0, (acc[k + 3]! - nl * m * m) / (nl - 1)));
      return sd / Math.sqrt(Math.max(1, nl / corr));
    };
    const start = origin + g.w * W;
    rows.push({
      start_s: start,
      end_s: start + W,
      samples: g.to - g.from,
      rateMean_rad_s: v3(0, 1),
      bodyMomentum_Nms: body,
      loopMomentum_Nms: loopH,
      systemMomentum_Nms: sys,
      systemMomentumMagnitude_Nms: sys ? Math.hypot(sys[0], sys[1], sys[2]) : null,
      bodyTorque_Nm: v3(11, 12),
      loopTorque_Nm: v3(15, 16),
      ledgerResidual_Nm: ledger,
      ledgerStdErr_Nm: ledger ? finVec(se(19), se(20), se(21)) : null,
      ledgerResidualMagnitude_Nm: ledger ? Math.hypot(ledger[0], ledger[1], ledger[2]) : null,
      ledgerSamples: nl,
      magField_nT: acc[25]! > 0 ? fin(acc[26]! / acc[25]!) : null,
    });
  }
  return rows;
}

function analyseBursts(bursts: readonly BurstInput[], o: AnalysisOptions) {
  const out: BurstAnalysis[] = [];
  const groups = new Map<string, BurstInput[]>();
  for (const b of bursts) {
    const key = `${b.loopId}:${b.channel}`;
    const list = groups.get(key) ?? [];
    list.push(b);
    groups.set(key, list);
  }
  const falls: SpanAnalysis['waterfalls'] = [];
  for (const list of groups.values()) {
    list.sort((p, q) => p.t_s - q.t_s);
    const first = list[0]!;
    const supplied = o.pulsationBaselines?.find((b) => b.loopId === first.loopId && b.channel === first.channel) ?? null;
    const suppliedPeaks = supplied ? findPeaks(supplied.psd, o.peaks) : null;
    let spanBaseline: { psd: Psd; peaks: SpectralPeak[] } | null = null;
    const spectra: { t_s: number; psd: Psd }[] = [];
    for (const b of list) {
      if (b.values.length < 4) continue;
      const psd = welchPsd(b.values, b.sampleRate_hz, o.welch);
      const peaks = findPeaks(psd, o.peaks);
      let s = 0, ss = 0;
      for (let i = 0; i < b.values.length; i++) { s += b.values[i]!; ss += b.values[i]! * b.values[i]!; }
      let comparison: BurstAnalysis['comparison'] = null;
      if (supplied && suppliedPeaks) {
        comparison = { ...compareSpectra(psd, supplied.psd, o.peaks, { current: peaks, baseline: suppliedPeaks }), baseline: 'supplied' };
      } else if (spanBaseline) {
        comparison = { ...compareSpectra(psd, spanBaseline.psd, o.peaks, { current: peaks, baseline: spanBaseline.peaks }), baseline: 'first-in-span' };
      } else spanBaseline = { psd, peaks };
      out.push({
        loopId: b.loopId,
        channel: b.channel,
        t_s: b.t_s,
        sampleRate_hz: b.sampleRate_hz,
        samples: b.values.length,
        mean: s / b.values.length,
        rms: Math.sqrt(ss / b.values.length),
        psd,
        peaks,
        comparison,
      });
      spectra.push({ t_s: b.t_s, psd });
    }
    if (spectra.length > 0) falls.push({ loopId: first.loopId, channel: first.channel, waterfall: waterfall(spectra) });
  }
  out.sort((p, q) => p.t_s - q.t_s || p.loopId - q.loopId || p.channel - q.channel);
  falls.sort((p, q) => p.loopId - q.loopId || p.channel - q.channel);
  return { out, falls };
}

/**
 * Analyses one span of telemetry against the sheet in effect: per-loop and whole-body figures per window
 * (windows aligned to multiples of window_s in Unix time), thermal model and resistance trend per loop,
 * and pulsation spectra per burst. Sample arrays must be in ascending time order.
 */
export function analyseSpan(input: SpanInput, sheet: SpacecraftSheet, options: AnalysisOptions = {}): SpanAnalysis {
  const o = {
    ...options,
    window_s: options.window_s ?? 60,
    sgHalfWidth: options.sgHalfWidth ?? 10,
    sgOrder: options.sgOrder ?? 2,
    gapFactor: options.gapFactor ?? 1.5,
    fitIntercept: options.fitIntercept ?? false,
    magnetRefTemp_c: options.magnetRefTemp_c ?? 20,
    magnetTempCoeff_per_k: options.magnetTempCoeff_per_k ?? 0.001,
    saturationWindows: options.saturationWindows ?? 10,
    electrodeTempLimit_c: options.electrodeTempLimit_c ?? 70,
  };
  const W = o.window_s;
  let tMin = Infinity, tMax = -Infinity;
  const see = (t: Float64Array) => { if (t.length) { tMin = Math.min(tMin, t[0]!); tMax = Math.max(tMax, t[t.length - 1]!); } };
  see(input.attitude.t_s);
  for (const l of input.loops) see(l.t_s);
  const origin = Number.isFinite(tMin) ? Math.floor(tMin / W) * W : 0;
  const end = Number.isFinite(tMax) ? (Math.floor((tMax - origin) / W) + 1) * W + origin : origin;

  const loops: LoopSpanAnalysis[] = [];
  const forBody: { axis: Vec3; t_s: Float64Array; h: Float64Array; hdot: Float64Array; maxStep: number }[] = [];
  const skipped: number[] = [];
  for (const L of input.loops) {
    const loop = sheet.loops.find((s) => s.id === L.loopId);
    if (!loop) { skipped.push(L.loopId); continue; }
    const r = analyseLoop(L, loop, origin, o);
    loops.push(r.result);
    forBody.push({ axis: loop.axis, t_s: L.t_s, h: r.h, hdot: r.hdot, maxStep: r.maxStep });
  }
  const body = analyseBody(input.attitude, sheet, forBody, origin, o);
  const { out: bursts, falls } = analyseBursts(input.bursts, o);
  return { window_s: W, start_s: origin, end_s: end, loops, body, bursts, waterfalls: falls, skippedLoopIds: skipped };
}
