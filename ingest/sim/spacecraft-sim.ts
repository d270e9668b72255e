/**
 * The simulated spacecraft: truth model (rigid body, loops, driver, heat, environment), sensors,
 * on-board control and the telemetry it produces. Steps at 100 Hz with RK4; sensors, control,
 * heat and housekeeping run at 10 Hz; burst captures sample the pump pressure at 400 Hz.
 *
 * Sampling. Every fast housekeeping channel (gyro rate, pump current, electrode voltage, flow,
 * pressure rise) is the mean over the 100 ms that end at the packet's time tag, as integrating
 * converters and a rate-integrating gyro deliver them; the temperatures, the magnetometer and the
 * attitude estimate are read at the time tag. All the fast channels thus describe the same instant
 * (the middle of the interval): the ground's torque-constant fit separates kT from the losses only
 * through the fluid's inertia, and a lag of one channel against another would bias it (10 ms of lag
 * between current and flow biases kT by about 1 % on these loops). Over each 10 ms step the driver
 * current is held, so its mean is exact; flow and body rate are continuous and averaged by the
 * trapezoid rule over the step ends; the pulsation sines are averaged exactly.
 *
 * Pressure rise. The taps sit at the ends of the pump section, so the reported rise is what the
 * fluid there develops: η·Σ I·B/b minus the MHD (Hartmann) loss in the pump gaps, plus any
 * pulsation and noise. The ground adds the gap loss back from the sheet before it forms the
 * pressure effectiveness (src/lib/physics/analysis.ts), as the on-board pressure-per-amp monitor
 * below does.
 *
 * Excitation. Between slews the attitude controller would hold each loop at a nearly constant
 * current, from which no ground can tell the torque constant from the losses. The on-board software
 * adds the scenario's identification dither (a zero-mean multi-sine, ingest/sim/excitation.ts) to every
 * loop's current command, except in safe mode and around the loop's burst captures. To live with it,
 * a slew is complete when the attitude error has stayed inside its band for a dwell time, and momentum
 * management (unload decision, background magnetic unloading) works on the smoothed stored momentum.
 */

import type { SheetLoop, SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { loopGeometry } from '../../src/lib/physics/loop-geometry';
import { backEmf, fluidGapResistance, idealPressureConstant, idealTorqueConstant } from '../../src/lib/physics/pump';
import { unixMsToCuc } from '../../src/lib/telemetry/cuc';
import { BURST_MAX_SAMPLES } from '../../src/lib/telemetry/layout';
import { LOOP_STATUS } from '../../src/lib/telemetry/types';
import type { AttitudeRecord, BurstRecord, EventRecord, LoopRecord, TelemetryRecord, Vec3 } from '../../src/lib/telemetry/types';
import type { Scenario } from '../scenario.schema';
import { AttitudeController, allocationMatrix, rateDampingDipole, unloadDipole } from './controller';
import { TruthIntegrator, createTruthModel, initialState, zeroInputs } from './dynamics';
import type { TruthInputs, TruthModel } from './dynamics';
import { LoopExcitation } from './excitation';
import { effectivenessAt, factorAt, gyroBiasAt, loopFaults, pulsationsAt } from './faults';
import { LossTable } from './loss-table';
import { circularOrbitFromTle, dipoleField, gravityGradientTorque, orbitPosition } from './orbit';
import type { CircularOrbit } from './orbit';
import { attitudeErrorVector, quatFromAxisAngle, quatMultiply, quatNormalizeInPlace, rotateToBody } from './quaternion';
import type { Quat } from './quaternion';
import { Rng } from './rng';
import { LoopThermal, defaultThermalParameters } from './thermal';

/**
 * NdFeB remanence falls by about 0.1 % per kelvin (a typical datasheet coefficient, from memory): the
 * pump's field, and with it the Lorentz pressure and the back-EMF, weakens as the magnets warm. The
 * gap's Hartmann loss (∝ B²) is left at its 20 °C value; the ground's fit absorbs it in its friction terms.
 */
const REMANENCE_COEFF_PER_K = 0.001;
const fieldFactor = (magnet_C: number) => 1 - REMANENCE_COEFF_PER_K * (magnet_C - 20);

/** Integration step, s (100 Hz). */
export const STEP_S = 0.01;
/** Integration steps per housekeeping sample. */
export const STEPS_PER_TICK = 10;
/** Housekeeping period, ms (10 Hz). */
export const TICK_MS = 100;
/** Burst capture sample rate, Hz. */
export const BURST_RATE_HZ = 400;
/** Burst capture length, samples. */
export const BURST_SAMPLES = BURST_MAX_SAMPLES;
/** Time between burst captures of one loop, s. */
export const BURST_PERIOD_S = 300;
/** Every this many captures the measured current (channel 1) is captured with the pressure. */
export const BURST_CURRENT_EVERY = 6;
const SUBSAMPLES = Math.round(BURST_RATE_HZ * STEP_S);

/** Attitude modes of the housekeeping packet. */
export const ATTITUDE_MODE = { safe: 0, pointing: 1, slew: 2, unload: 3 } as const;
const MODE_NAME = ['SAFE', 'POINTING', 'SLEW', 'MOMENTUM UNLOAD'] as const;

/** Event codes this spacecraft uses. */
export const EVENT_CODE = {
  modeChange: 0x0101,
  slewComplete: 0x0102,
  slewTimeout: 0x0103,
  pumpOvertemp: 0x0201,
  pumpRestored: 0x0202,
  pressurePerAmpLow: 0x0301,
  pressurePerAmpRecovered: 0x0302,
} as const;

/** Effectiveness of healthy loops when the scenario gives none, by loop index. */
export const DEFAULT_EFFECTIVENESS = [0.72, 0.68, 0.75, 0.7] as const;

// Sensor noise (1σ per 10 Hz sample) and hardware constants of the demo spacecraft.
const GYRO_NOISE_RAD_S = 2e-5;
const ATTITUDE_NOISE_RAD = 2e-5;
const MAG_NOISE_NT = 40;
const CURRENT_NOISE_A = 0.01;
const VOLTAGE_NOISE_V = 0.002;
const FLOW_NOISE_M_S = 0.002;
const PRESSURE_NOISE_PA = 3;
const THERMISTOR_NOISE_C = 0.05;
const DRIVER_TAU_S = 0.02;
const DRIVER_NOISE_A = 0.02;
/** Copper temperature coefficient at 20 °C, 1/K (IEC 60028). */
const COPPER_ALPHA = 0.00393;
const ELECTRODE_OVERTEMP_C = 75;
const ELECTRODE_RESTORE_C = 50;
const HEATER_ON_C = 2;
const HEATER_OFF_C = 5;
const HEATER_POWER_W = 1.5;
const RESIDUAL_DIPOLE_PER_STATION_AM2 = 0.004;
const TORQUER_MAX_AM2 = 0.2;
const UNLOAD_GAIN_1_S = 1e-2;
/**
 * Gain of the background unloading that runs outside the unload mode too: the gravity-gradient and
 * residual-dipole torques of an inertially pointed spacecraft have a non-zero mean, and without it the
 * loops would fill up over hours and meet a slew already half full (common practice for magnetic
 * momentum management).
 */
const BACKGROUND_UNLOAD_GAIN_1_S = 2e-3;
const RATE_DAMPING_TIME_S = 60;
const UNLOAD_ENTER = 0.6;
const UNLOAD_EXIT = 0.2;
/** Effectiveness the on-board software assumes when it sizes the loops' momentum capacity. */
const DESIGN_EFFECTIVENESS = 0.7;
const MONITOR_WINDOW_S = 120;
const MONITOR_MIN_CURRENT_A = 0.5;
const MONITOR_LOW = 0.5;
const MONITOR_RECOVERED = 0.55;
const ATTITUDE_GAIN_1_S = 0.05;
const RATE_BANDWIDTH_RAD_S = 0.3;
const RATE_ZETA = 0.9;
const SLEW_DONE_RAD = (0.5 * Math.PI) / 180;
/** A slew is complete once the attitude error has stayed inside SLEW_DONE_RAD for this long, s. */
const SLEW_SETTLE_S = 20;
const SLEW_TIMEOUT_S = 900;
/**
 * Slew rates are limited so that a slew stores at most this fraction of the loops' capacity: enough for
 * a 10° slew in a few minutes, while the current stays low enough that a healthy electrode warms by well
 * under 0.02 K/s over a 60 s window.
 */
const SLEW_MOMENTUM_FRACTION = 0.35;
/**
 * The dither fades out (raised cosine over EXCITATION_FADE_S) so that it is zero from
 * EXCITATION_QUIET_BEFORE_S before a burst capture of its loop until the capture ends, and fades back
 * in after: the capture shows the pump's own spectrum, not the calibration signal.
 */
const EXCITATION_QUIET_BEFORE_S = 4;
const EXCITATION_FADE_S = 2;
/** Time constant of the smoothed loop momentum that the unload decision looks at, s. */
const FILL_SMOOTHING_S = 30;

interface BurstCapture {
  startMs: number;
  n: number;
  pressure: Float32Array;
  current: Float32Array | null;
}

interface LoopRuntime {
  sheet: SheetLoop;
  id: number;
  index: number;
  axis: Vec3;
  kp: number;
  kT: number;
  rated: number;
  losses: LossTable;
  hPerV: number;
  crossSection: number;
  rGap: number;
  r0: number;
  eta0: number;
  hCap: number;
  /** Loop momentum smoothed over FILL_SMOOTHING_S, N·m·s. */
  hSmooth: number;
  thermal: LoopThermal;
  // fault values held over the current tick
  eta: number;
  rFactor: number;
  sinkFactor: number;
  // driver
  current: number;
  cmd: number;
  excitation: LoopExcitation;
  enabled: boolean;
  heater: boolean;
  // tick accumulators, and the flow at the start of the step
  v0: number;
  sumI: number;
  sumI2: number;
  sumP: number;
  sumV: number;
  // last measurements
  iMeas: number;
  vMeas: number;
  // burst
  burst: BurstCapture | null;
  nextBurstS: number;
  captures: number;
  // on-board pressure-per-amp monitor
  monSxy: number;
  monSxx: number;
  monN: number;
  monLow: boolean;
}

export interface SimOptions {
  sheet: SpacecraftSheet;
  scenario: Scenario;
  /** Unix ms of the scenario start (fault times count from here). */
  startMs: number;
  /** Receives every telemetry record in time order; `seq` is left 0 for the packet writer. */
  emit: (record: TelemetryRecord) => void;
  /** Gravity-gradient and magnetic torques; default on. */
  disturbances?: boolean;
}

/** Quantises samples to int16 with scale and offset spanning their range (values as float32). */
export function quantizeSamples(samples: Float32Array | readonly number[], count = samples.length): { scale: number; offset: number; raw: Int16Array } {
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < count; i++) {
    const x = samples[i]!;
    if (x < lo) lo = x;
    if (x > hi) hi = x;
  }
  const offset = Math.fround((hi + lo) / 2);
  const scale = Math.fround(Math.max((hi - lo) / 65_000, 1e-7 * Math.max(1, Math.abs(offset))));
  const raw = new Int16Array(count);
  for (let i = 0; i < count; i++) {
    const r = Math.round((samples[i]! - offset) / scale);
    raw[i] = r > 32_767 ? 32_767 : r < -32_767 ? -32_767 : r;
  }
  return { scale, offset, raw };
}

/** One simulated spacecraft: call tick() for each 100 ms; records go to `emit` in time order. */
export class SpacecraftSim {
  readonly sheet: SpacecraftSheet;
  readonly scenario: Scenario;
  readonly startMs: number;
  readonly model: TruthModel;
  private readonly emit: (record: TelemetryRecord) => void;
  private readonly disturbances: boolean;
  private readonly rng: Rng;
  private readonly loops: LoopRuntime[];
  private readonly inputs: TruthInputs;
  private readonly integrator: TruthIntegrator;
  private readonly orbit: CircularOrbit;
  private readonly allocation: Float64Array;
  private readonly projector: number[][];
  private readonly maxRate: Vec3;
  private readonly residualDipole: Vec3;
  private readonly driverDecay: number;
  private readonly dampingGain: number;
  private readonly y: Float64Array;
  private step = 0;
  private mode: number = ATTITUDE_MODE.pointing;
  private qRef: Quat;
  private nextSlewS: number;
  private slewCount = 0;
  private slewStartS = 0;
  private settledSinceS: number | null = null;
  private readonly sumRate = new Float64Array(3);
  private readonly controller: AttitudeController;
  private torquer: Vec3 = [0, 0, 0];
  private fieldInertial: Vec3 = [0, 0, 0];
  private nextMonitorS = MONITOR_WINDOW_S;
  private readonly pendingEvents: EventRecord[] = [];
  private readonly pendingBursts: BurstRecord[] = [];

  constructor(opts: SimOptions) {
    this.sheet = opts.sheet;
    this.scenario = opts.scenario;
    this.startMs = opts.startMs;
    this.emit = opts.emit;
    this.disturbances = opts.disturbances ?? true;
    this.rng = new Rng(opts.scenario.seed);
    this.model = createTruthModel(opts.sheet.massProperties.inertia_kg_m2, opts.sheet.loops);
    this.inputs = zeroInputs(opts.sheet.loops.length);
    this.orbit = circularOrbitFromTle(opts.sheet.orbit.tle);
    this.driverDecay = Math.exp(-STEP_S / DRIVER_TAU_S);
    const inertia = opts.sheet.massProperties.inertia_kg_m2;
    this.dampingGain = Math.max(inertia[0][0], inertia[1][1], inertia[2][2]) / RATE_DAMPING_TIME_S;

    const sink0 = this.sinkTemperature(opts.startMs);
    const ex = opts.scenario.excitation;
    this.loops = opts.sheet.loops.map((loop, index) => {
      const geo = loopGeometry(loop);
      const eta0 = opts.scenario.loops.find((l) => l.id === loop.id)?.effectiveness ?? DEFAULT_EFFECTIVENESS[index % 4]!;
      const losses = this.model.loops[index]!.losses;
      const kp = idealPressureConstant(loop);
      const stations = loop.pumpStations.length;
      const rt: LoopRuntime = {
        sheet: loop,
        id: loop.id,
        index,
        axis: [loop.axis[0], loop.axis[1], loop.axis[2]],
        kp,
        kT: idealTorqueConstant(loop),
        rated: loop.ratedCurrent_A,
        losses,
        hPerV: this.model.loops[index]!.hPerV,
        crossSection: geo.crossSection_m2,
        rGap: fluidGapResistance(loop),
        r0: 0.01 + 0.006 * stations,
        eta0,
        hCap: this.model.loops[index]!.hPerV * steadySpeed(losses, DESIGN_EFFECTIVENESS * kp * loop.ratedCurrent_A),
        hSmooth: 0,
        // at rest with the radiator when the scenario starts
        thermal: new LoopThermal(defaultThermalParameters(stations, geo.fluidMass_kg), sink0),
        eta: eta0,
        rFactor: 1,
        sinkFactor: 1,
        current: 0,
        cmd: 0,
        excitation: new LoopExcitation({
          amplitude_A: ex.enabled ? ex.amplitude * loop.ratedCurrent_A : 0,
          period_s: ex.period_s,
          // the loops of one spacecraft a third of the period apart
          shift_s: (index * ex.period_s) / 3,
        }),
        enabled: true,
        heater: false,
        v0: 0,
        sumI: 0,
        sumI2: 0,
        sumP: 0,
        sumV: 0,
        iMeas: 0,
        vMeas: 0,
        burst: null,
        nextBurstS: 60 + 20 * index,
        captures: 0,
        monSxy: 0,
        monSxx: 0,
        monN: 0,
        monLow: false,
      };
      return rt;
    });

    const axes = this.loops.map((l) => l.axis);
    this.allocation = allocationMatrix(axes);
    // P = N M projects a body vector onto the axes the loops can act on.
    this.projector = [0, 1, 2].map((r) =>
      [0, 1, 2].map((c) => axes.reduce((s, a, i) => s + a[r]! * this.allocation[i * 3 + c]!, 0)),
    );
    const I = opts.sheet.massProperties.inertia_kg_m2;
    this.maxRate = [0, 1, 2].map((j) => {
      const h = this.loops.reduce((s, l) => s + Math.abs(l.axis[j]!) * l.hCap, 0);
      return (SLEW_MOMENTUM_FRACTION * h) / I[j]![j]!;
    }) as Vec3;
    const torqueCapacity = [0, 1, 2].map((j) => this.loops.reduce((s, l) => s + Math.abs(l.axis[j]!) * l.kT * l.rated, 0));
    this.controller = new AttitudeController({
      attitudeGain_1_s: ATTITUDE_GAIN_1_S,
      rateBandwidth_rad_s: RATE_BANDWIDTH_RAD_S,
      zeta: RATE_ZETA,
      maxRate_rad_s: this.maxRate,
      maxIntegralTorque_Nm: torqueCapacity.map((t) => 0.5 * t) as Vec3,
    });
    this.residualDipole = [0, 0, 0];
    for (const l of this.loops) {
      const m = RESIDUAL_DIPOLE_PER_STATION_AM2 * l.sheet.pumpStations.length;
      for (let j = 0; j < 3; j++) this.residualDipole[j]! += m * l.axis[j]!;
    }

    const q0: Quat = [this.rng.normal(), this.rng.normal(), this.rng.normal(), this.rng.normal()];
    quatNormalizeInPlace(q0);
    const w0: Vec3 = [this.rng.normal() * 2e-4, this.rng.normal() * 2e-4, this.rng.normal() * 2e-4];
    this.integrator = new TruthIntegrator(this.model, this.inputs, initialState(w0, q0, this.loops.map(() => 0)));
    this.y = this.integrator.y;
    this.qRef = [...q0];
    this.nextSlewS = opts.scenario.attitude.slewPeriod_s > 0 ? opts.scenario.attitude.slewPeriod_s : Infinity;
    this.updateEnvironment();
  }

  /** Unix ms of the simulation time. */
  get timeMs(): number {
    return this.startMs + this.step * STEP_S * 1000;
  }

  /** Seconds since the scenario start. */
  get timeS(): number {
    return this.step * STEP_S;
  }

  /** Attitude mode now (0 safe, 1 pointing, 2 slew, 3 momentum unload). */
  get attitudeMode(): number {
    return this.mode;
  }

  /** True state vector [ω, q, v…] (a copy). */
  get state(): number[] {
    return [...this.y];
  }

  /** True effectiveness η of a loop now (ratio of developed to ideal pump pressure). */
  trueEffectiveness(loopId: number): number {
    const l = this.loopById(loopId);
    return effectivenessAt(l.eta0, this.scenario.faults, loopId, this.timeS);
  }

  /** True electrode temperature of a loop, °C. */
  electrodeTemperature(loopId: number): number {
    return this.loopById(loopId).thermal.electrode_C;
  }

  /** Momentum the on-board software takes as a loop's capacity, N·m·s. */
  momentumCapacity(loopId: number): number {
    return this.loopById(loopId).hCap;
  }

  /** Advances one housekeeping period (10 integration steps) and emits that sample's records. */
  tick(): void {
    this.applyFaults();
    this.updateDisturbanceTorque();
    for (const l of this.loops) {
      l.sumI = 0;
      l.sumI2 = 0;
      l.sumP = 0;
      l.sumV = 0;
    }
    this.sumRate.fill(0);
    for (let k = 0; k < STEPS_PER_TICK; k++) this.integrate();
    const tMs = this.timeMs;
    const tS = this.timeS;
    this.updateEnvironment();
    const { coarse, fine } = unixMsToCuc(tMs);

    // Attitude sensors: gyro (mean rate over the tick) with bias, attitude estimate, magnetometer.
    const bias = gyroBiasAt(this.scenario.faults, tS);
    const nSteps = STEPS_PER_TICK;
    const rate: Vec3 = [
      this.sumRate[0]! / nSteps + bias[0] + GYRO_NOISE_RAD_S * this.rng.normal(),
      this.sumRate[1]! / nSteps + bias[1] + GYRO_NOISE_RAD_S * this.rng.normal(),
      this.sumRate[2]! / nSteps + bias[2] + GYRO_NOISE_RAD_S * this.rng.normal(),
    ];
    const qTrue: Quat = [this.y[3]!, this.y[4]!, this.y[5]!, this.y[6]!];
    const dq: Quat = [
      0.5 * ATTITUDE_NOISE_RAD * this.rng.normal(),
      0.5 * ATTITUDE_NOISE_RAD * this.rng.normal(),
      0.5 * ATTITUDE_NOISE_RAD * this.rng.normal(),
      1,
    ];
    const qEst = quatMultiply(dq, qTrue);
    quatNormalizeInPlace(qEst);
    const bBody = rotateToBody(qTrue, this.fieldInertial);
    const bMeas: Vec3 = [
      bBody[0] + (MAG_NOISE_NT * 1e-9) * this.rng.normal(),
      bBody[1] + (MAG_NOISE_NT * 1e-9) * this.rng.normal(),
      bBody[2] + (MAG_NOISE_NT * 1e-9) * this.rng.normal(),
    ];

    const sinkC = this.sinkTemperature(tMs);
    const loopRecords: LoopRecord[] = [];
    for (const l of this.loops) {
      const n = STEPS_PER_TICK;
      const iMean = l.sumI / n;
      const i2Mean = l.sumI2 / n;
      const vMean = l.sumV / n;
      const te = l.thermal.electrode_C;
      const rElectrode = l.r0 * (1 + COPPER_ALPHA * (te - 20)) * l.rFactor;
      const voltage = iMean * (rElectrode + l.rGap) + backEmf(vMean, l.sheet) * fieldFactor(l.thermal.magnet_C);
      l.iMeas = iMean + CURRENT_NOISE_A * this.rng.normal();
      l.vMeas = vMean + FLOW_NOISE_M_S * this.rng.normal();
      const pressure = l.sumP / n + PRESSURE_NOISE_PA * this.rng.normal();
      loopRecords.push({
        kind: 'loop',
        seq: 0,
        coarse,
        fine,
        loopId: l.id,
        status:
          (l.enabled ? LOOP_STATUS.pumpEnabled : 0) | (l.heater ? LOOP_STATUS.heaterOn : 0) | LOOP_STATUS.flowmeterValid,
        commandedCurrent_a: l.cmd,
        measuredCurrent_a: l.iMeas,
        electrodeVoltage_v: voltage + VOLTAGE_NOISE_V * this.rng.normal(),
        flowVelocity_m_s: l.vMeas,
        pressureRise_pa: pressure,
        fluidTemp_c: l.thermal.fluid_C + THERMISTOR_NOISE_C * this.rng.normal(),
        electrodeTemp_c: te + THERMISTOR_NOISE_C * this.rng.normal(),
        magnetTemp_c: l.thermal.magnet_C + THERMISTOR_NOISE_C * this.rng.normal(),
      });

      // Heat over the tick: electrode Joule heat; hydraulic dissipation, gap Joule heat and heater in the fluid.
      const tf = l.thermal.fluid_C;
      if (tf < HEATER_ON_C) l.heater = true;
      else if (tf > HEATER_OFF_C) l.heater = false;
      const hydraulic = Math.abs(l.losses.total(vMean) * vMean) * l.crossSection;
      const fluidPower = hydraulic + i2Mean * l.rGap + (l.heater ? HEATER_POWER_W : 0);
      l.thermal.step(TICK_MS / 1000, i2Mean * rElectrode, fluidPower, sinkC, l.sinkFactor);

      this.monitorLoop(l, pressure);
      this.protectLoop(l, tMs);
    }
    if (tS >= this.nextMonitorS) {
      for (const l of this.loops) this.closeMonitorWindow(l, tMs);
      this.nextMonitorS += MONITOR_WINDOW_S;
    }

    this.control(tS, tMs, qEst, rate, bMeas);

    const attitude: AttitudeRecord = {
      kind: 'attitude',
      seq: 0,
      coarse,
      fine,
      mode: this.mode,
      rate_rad_s: rate,
      quaternion: qEst,
      mag_nT: [bMeas[0] * 1e9, bMeas[1] * 1e9, bMeas[2] * 1e9],
    };
    this.emit(attitude);
    for (const r of loopRecords) this.emit(r);
    for (const e of this.pendingEvents) this.emit(e);
    this.pendingEvents.length = 0;
    for (const b of this.pendingBursts) this.emit(b);
    this.pendingBursts.length = 0;
  }

  private loopById(loopId: number): LoopRuntime {
    const l = this.loops.find((x) => x.id === loopId);
    if (!l) throw new RangeError(`${this.sheet.spacecraft.key} has no loop ${loopId}`);
    return l;
  }

  private applyFaults(): void {
    const t = this.timeS;
    for (const l of this.loops) {
      const faults = loopFaults(this.scenario, l.id);
      l.eta = effectivenessAt(l.eta0, faults, l.id, t);
      l.rFactor = factorAt(faults, 'electrode-resistance-rise', l.id, t);
      l.sinkFactor = factorAt(faults, 'thermal-degradation', l.id, t);
      this.inputs.pulsations[l.index] = pulsationsAt(faults, l.id, t);
    }
  }

  private updateEnvironment(): void {
    const r = orbitPosition(this.orbit, this.timeMs);
    this.fieldInertial = dipoleField(r, this.timeMs);
  }

  private updateDisturbanceTorque(): void {
    const tau = this.inputs.torque_Nm;
    if (!this.disturbances) {
      tau[0] = tau[1] = tau[2] = 0;
      return;
    }
    const q = [this.y[3]!, this.y[4]!, this.y[5]!, this.y[6]!];
    const rI = orbitPosition(this.orbit, this.timeMs);
    const radius = Math.hypot(rI[0], rI[1], rI[2]);
    const rB = rotateToBody(q, [rI[0] / radius, rI[1] / radius, rI[2] / radius]);
    const gg = gravityGradientTorque(this.sheet.massProperties.inertia_kg_m2, rB, radius);
    const b = rotateToBody(q, this.fieldInertial);
    const m: Vec3 = [
      this.residualDipole[0] + this.torquer[0],
      this.residualDipole[1] + this.torquer[1],
      this.residualDipole[2] + this.torquer[2],
    ];
    tau[0] = gg[0] + m[1] * b[2] - m[2] * b[1];
    tau[1] = gg[1] + m[2] * b[0] - m[0] * b[2];
    tau[2] = gg[2] + m[0] * b[1] - m[1] * b[0];
  }

  /**
   * One 100 Hz step: driver currents, RK4 of the truth model, accumulators and burst samples. The
   * accumulators take each channel's mean over the step (see the file comment).
   */
  private integrate(): void {
    const t0 = this.step * STEP_S;
    const t0Ms = this.timeMs;
    const y = this.y;
    const w0x = y[0]!, w0y = y[1]!, w0z = y[2]!;
    for (const l of this.loops) {
      const target = l.enabled ? l.cmd : 0;
      l.current = target + (l.current - target) * this.driverDecay + DRIVER_NOISE_A * this.rng.normal();
      if (!l.enabled && Math.abs(l.current) < 3 * DRIVER_NOISE_A) l.current = 0;
      this.inputs.pumpPressure_Pa[l.index] = l.eta * fieldFactor(l.thermal.magnet_C) * l.kp * l.current;
      l.v0 = y[7 + l.index]!;
      if (l.burst === null && t0 >= l.nextBurstS) {
        l.burst = {
          startMs: t0Ms,
          n: 0,
          pressure: new Float32Array(BURST_SAMPLES),
          current: l.captures % BURST_CURRENT_EVERY === 0 ? new Float32Array(BURST_SAMPLES) : null,
        };
      }
    }
    this.integrator.step(t0, STEP_S);
    this.step++;
    const t1 = this.step * STEP_S;
    this.sumRate[0]! += 0.5 * (w0x + y[0]!);
    this.sumRate[1]! += 0.5 * (w0y + y[1]!);
    this.sumRate[2]! += 0.5 * (w0z + y[2]!);
    for (const l of this.loops) {
      const v0 = l.v0, v1 = y[7 + l.index]!;
      const vMean = 0.5 * (v0 + v1);
      const pump = this.inputs.pumpPressure_Pa[l.index]!;
      const pulses = this.inputs.pulsations[l.index]!;
      // mean over the step of the developed rise: the MHD loss is linear in v, each sine averages exactly
      let p = pump - l.losses.mhd(vMean);
      for (const pu of pulses) p += (pu.amplitude_Pa * (Math.cos(pu.omega_rad_s * t0) - Math.cos(pu.omega_rad_s * t1))) / (pu.omega_rad_s * STEP_S);
      l.sumI += l.current;
      l.sumI2 += l.current * l.current;
      l.sumV += vMean;
      l.sumP += p;
      const cap = l.burst;
      if (cap !== null) {
        for (let j = 0; j < SUBSAMPLES && cap.n < BURST_SAMPLES; j++) {
          const u = j / SUBSAMPLES;
          const ts = t0 + u * STEP_S;
          let ps = pump - l.losses.mhd(v0 + u * (v1 - v0)) + PRESSURE_NOISE_PA * this.rng.normal();
          for (const pu of pulses) ps += pu.amplitude_Pa * Math.sin(pu.omega_rad_s * ts);
          cap.pressure[cap.n] = ps;
          if (cap.current !== null) cap.current[cap.n] = l.current + CURRENT_NOISE_A * this.rng.normal();
          cap.n++;
        }
        if (cap.n >= BURST_SAMPLES) this.finishBurst(l, cap);
      }
    }
  }

  private finishBurst(l: LoopRuntime, cap: BurstCapture): void {
    const { coarse, fine } = unixMsToCuc(cap.startMs);
    const channels: [0 | 1, Float32Array][] = [[0, cap.pressure]];
    if (cap.current !== null) channels.push([1, cap.current]);
    for (const [channel, samples] of channels) {
      const q = quantizeSamples(samples);
      this.pendingBursts.push({
        kind: 'burst',
        seq: 0,
        coarse,
        fine,
        loopId: l.id,
        channel,
        sampleRate_hz: BURST_RATE_HZ,
        scale: q.scale,
        offset: q.offset,
        raw: q.raw,
      });
    }
    l.burst = null;
    l.captures++;
    l.nextBurstS += BURST_PERIOD_S;
  }

  /** Radiator temperature, °C: warm on the day side, cold in eclipse, once per orbit. */
  private sinkTemperature(ms: number): number {
    const u = this.orbit.u0_rad + (this.orbit.n_rad_s * (ms - this.orbit.epochMs)) / 1000;
    return 18 + 8 * Math.sin(u);
  }

  private event(tMs: number, severity: 1 | 2 | 3 | 4, code: number, loopId: number | null, text: string): void {
    const { coarse, fine } = unixMsToCuc(tMs);
    this.pendingEvents.push({ kind: 'event', seq: 0, coarse, fine, severity, code, loopId, text: text.slice(0, 64) });
  }

  private setMode(mode: number, tMs: number, detail = ''): void {
    if (mode === this.mode) return;
    this.mode = mode;
    this.event(tMs, mode === ATTITUDE_MODE.safe ? 3 : 1, EVENT_CODE.modeChange, null, `ADCS mode ${MODE_NAME[mode]}${detail}`);
  }

  private monitorLoop(l: LoopRuntime, pressure: number): void {
    if (!l.enabled || Math.abs(l.iMeas) < MONITOR_MIN_CURRENT_A) return;
    const x = l.kp * l.iMeas;
    const y = pressure + l.losses.mhd(l.vMeas);
    l.monSxy += x * y;
    l.monSxx += x * x;
    l.monN++;
  }

  private closeMonitorWindow(l: LoopRuntime, tMs: number): void {
    if (l.monN >= 100 && l.monSxx > 0) {
      const ratio = l.monSxy / l.monSxx;
      if (!l.monLow && ratio < MONITOR_LOW) {
        l.monLow = true;
        this.event(tMs, 3, EVENT_CODE.pressurePerAmpLow, l.id, `loop ${l.id} pressure per amp ${ratio.toFixed(2)} of ideal`);
      } else if (l.monLow && ratio > MONITOR_RECOVERED) {
        l.monLow = false;
        this.event(tMs, 1, EVENT_CODE.pressurePerAmpRecovered, l.id, `loop ${l.id} pressure per amp back to ${ratio.toFixed(2)}`);
      }
    }
    l.monSxy = 0;
    l.monSxx = 0;
    l.monN = 0;
  }

  /** 1 away from burst captures, 0 from EXCITATION_QUIET_BEFORE_S before one until it ends, raised-cosine fades between. */
  private excitationEnvelope(l: LoopRuntime, tS: number): number {
    if (l.burst !== null) return 0;
    const captureS = BURST_SAMPLES / BURST_RATE_HZ;
    const toQuiet = l.nextBurstS - EXCITATION_QUIET_BEFORE_S - tS; // > 0 before the quiet time
    const sinceEnd = tS - (l.nextBurstS - BURST_PERIOD_S + captureS); // > 0 after the previous capture
    const fade = (x: number) => (x >= EXCITATION_FADE_S ? 1 : x <= 0 ? 0 : 0.5 - 0.5 * Math.cos((Math.PI * x) / EXCITATION_FADE_S));
    return Math.min(fade(toQuiet), l.captures > 0 ? fade(sinceEnd) : 1);
  }

  private protectLoop(l: LoopRuntime, tMs: number): void {
    const te = l.thermal.electrode_C;
    if (l.enabled && te > ELECTRODE_OVERTEMP_C) {
      l.enabled = false;
      l.cmd = 0;
      this.event(tMs, 4, EVENT_CODE.pumpOvertemp, l.id, `loop ${l.id} electrode ${te.toFixed(1)} C: pump disabled`);
    } else if (!l.enabled && te < ELECTRODE_RESTORE_C) {
      l.enabled = true;
      this.event(tMs, 2, EVENT_CODE.pumpRestored, l.id, `loop ${l.id} electrode ${te.toFixed(1)} C: pump enabled`);
    }
  }

  /** On-board control at 10 Hz from the measurements; sets the loop current commands and torquer. */
  private control(tS: number, tMs: number, q: Quat, omega: Vec3, b_T: Vec3): void {
    const I = this.sheet.massProperties.inertia_kg_m2;
    const h: Vec3 = [0, 0, 0];
    const smoothing = 1 - Math.exp(-TICK_MS / 1000 / FILL_SMOOTHING_S);
    for (const l of this.loops) {
      const hi = l.hPerV * l.vMeas;
      for (let j = 0; j < 3; j++) h[j]! += hi * l.axis[j]!;
      // the stored momentum the unload decision sees: first-order smoothing takes out the zero-mean dither
      l.hSmooth += smoothing * (hi - l.hSmooth);
    }
    const allEnabled = this.loops.every((l) => l.enabled);
    const P = this.projector;
    const project = (v: Vec3): Vec3 => [0, 1, 2].map((r) => P[r]![0]! * v[0] + P[r]![1]! * v[1] + P[r]![2]! * v[2]) as Vec3;
    const theta = project(attitudeErrorVector(q, this.qRef));
    const omegaC = project(omega);
    const thetaNorm = Math.hypot(theta[0], theta[1], theta[2]);
    if (this.mode === ATTITUDE_MODE.slew && thetaNorm < SLEW_DONE_RAD) this.settledSinceS ??= tS;
    else this.settledSinceS = null;

    // Mode logic.
    if (!allEnabled) {
      this.setMode(ATTITUDE_MODE.safe, tMs);
    } else if (this.mode === ATTITUDE_MODE.safe) {
      this.qRef = [...q];
      this.controller.reset();
      this.setMode(ATTITUDE_MODE.pointing, tMs, ', attitude reacquired');
    } else {
      const fill = Math.max(...this.loops.map((l) => Math.abs(l.hSmooth) / l.hCap));
      if (this.mode === ATTITUDE_MODE.pointing && fill > UNLOAD_ENTER) {
        this.setMode(ATTITUDE_MODE.unload, tMs);
      } else if (this.mode === ATTITUDE_MODE.unload && fill < UNLOAD_EXIT) {
        this.setMode(ATTITUDE_MODE.pointing, tMs);
      } else if (this.mode === ATTITUDE_MODE.slew && this.settledSinceS !== null && tS - this.settledSinceS >= SLEW_SETTLE_S) {
        this.event(tMs, 1, EVENT_CODE.slewComplete, null, `slew complete in ${(tS - this.slewStartS).toFixed(1)} s`);
        this.setMode(ATTITUDE_MODE.pointing, tMs);
      } else if (this.mode === ATTITUDE_MODE.slew && tS - this.slewStartS > SLEW_TIMEOUT_S) {
        this.event(tMs, 2, EVENT_CODE.slewTimeout, null, `slew not settled after ${SLEW_TIMEOUT_S} s, error ${((thetaNorm * 180) / Math.PI).toFixed(2)} deg`);
        this.setMode(ATTITUDE_MODE.pointing, tMs);
      }
      if (tS >= this.nextSlewS) {
        this.nextSlewS += this.scenario.attitude.slewPeriod_s;
        if (this.mode === ATTITUDE_MODE.pointing) {
          const k = this.slewCount % this.loops.length;
          const sign = Math.floor(this.slewCount / this.loops.length) % 2 === 0 ? 1 : -1;
          const angle = sign * this.scenario.attitude.slewAngle_deg;
          this.qRef = quatMultiply(quatFromAxisAngle(this.loops[k]!.axis, (angle * Math.PI) / 180), this.qRef);
          quatNormalizeInPlace(this.qRef);
          this.slewCount++;
          this.slewStartS = tS;
          this.settledSinceS = null;
          this.setMode(ATTITUDE_MODE.slew, tMs, ` ${angle.toFixed(1)} deg about loop ${this.loops[k]!.id} axis`);
        }
      }
    }

    const safe = this.mode === ATTITUDE_MODE.safe;
    const tau = this.controller.torque(I, theta, omegaC, h, TICK_MS / 1000, safe);

    // Body torque −ḣ_i n̂_i: ḣ = −M τ; current from the ideal torque constant plus loss feed-forward,
    // then the identification dither on top (none in safe mode, none around a burst capture).
    for (const l of this.loops) {
      if (!l.enabled) {
        l.cmd = 0;
        continue;
      }
      const m = this.allocation;
      const r = l.index * 3;
      const hdot = -(m[r]! * tau[0] + m[r + 1]! * tau[1] + m[r + 2]! * tau[2]);
      const cmd = Math.max(-l.rated, Math.min(l.rated, hdot / l.kT + l.losses.total(l.vMeas) / l.kp));
      const dither = safe ? 0 : this.excitationEnvelope(l, tS) * l.excitation.at(tS);
      l.cmd = Math.max(-l.rated, Math.min(l.rated, cmd + dither));
    }
    // Torquer: background unloading (strong in the unload mode), and always damping the rates the loops
    // cannot reach. Unloading acts on the smoothed stored momentum: the zero-mean dither is nothing to unload.
    const hStored: Vec3 = [0, 0, 0];
    for (const l of this.loops) for (let j = 0; j < 3; j++) hStored[j]! += l.hSmooth * l.axis[j]!;
    const unload = safe ? [0, 0, 0] : unloadDipole(hStored, b_T, this.mode === ATTITUDE_MODE.unload ? UNLOAD_GAIN_1_S : BACKGROUND_UNLOAD_GAIN_1_S, TORQUER_MAX_AM2);
    const damp = rateDampingDipole([omega[0] - omegaC[0], omega[1] - omegaC[1], omega[2] - omegaC[2]], b_T, this.dampingGain);
    this.torquer = [0, 1, 2].map((j) => Math.max(-TORQUER_MAX_AM2, Math.min(TORQUER_MAX_AM2, unload[j]! + damp[j]!))) as Vec3;
  }
}

/** Steady speed where the developed pressure equals the losses (bisection on the monotone loss). */
export function steadySpeed(losses: LossTable, developed_Pa: number): number {
  if (developed_Pa === 0) return 0;
  const sign = Math.sign(developed_Pa);
  const target = Math.abs(developed_Pa);
  let lo = 0, hi = 0.01;
  while (losses.total(hi) < target && hi < 100) hi *= 2;
  for (let i = 0; i < 80; i++) {
    const mid = (lo + hi) / 2;
    if (losses.total(mid) < target) lo = mid;
    else hi = mid;
  }
  return sign * (lo + hi) / 2;
}
