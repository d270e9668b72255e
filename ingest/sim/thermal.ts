/**
 * Lumped thermal model of one loop: three nodes (electrodes, fluid, magnets), each
 * C dT/dt = P_in − Σ (T − T_j)/R_j (lumped capacitance with conductive links; Incropera & DeWitt,
 * Fundamentals of Heat and Mass Transfer, 2007, ch. 5, from memory). Electrodes take the Joule heat
 * of the electrode circuit, the fluid the hydraulic dissipation, the gap's Joule heat and the
 * heater; each node links to the radiator (sink), whose links a thermal-degradation fault weakens.
 */

/** Heat capacities (J/K) and thermal resistances (K/W) of one loop. */
export interface ThermalParameters {
  electrodeCapacity_J_K: number;
  fluidCapacity_J_K: number;
  magnetCapacity_J_K: number;
  electrodeToFluid_K_W: number;
  fluidToMagnet_K_W: number;
  electrodeToSink_K_W: number;
  fluidToSink_K_W: number;
  magnetToSink_K_W: number;
}

/** Plausible values for a desk-sized loop with `stations` pump stations and `fluidMass_kg` of alloy. */
export function defaultThermalParameters(stations: number, fluidMass_kg: number): ThermalParameters {
  return {
    electrodeCapacity_J_K: 9 * stations, // copper electrodes and bus bars, ~25 g per station
    fluidCapacity_J_K: fluidMass_kg * 296 + 30, // Ga–In–Sn 296 J/(kg·K) plus the channel walls
    magnetCapacity_J_K: 55 * stations, // NdFeB magnets and iron yoke, ~120 g per station
    electrodeToFluid_K_W: 2.2 / stations,
    fluidToMagnet_K_W: 5 / stations,
    electrodeToSink_K_W: 9 / stations,
    fluidToSink_K_W: 6,
    magnetToSink_K_W: 4 / stations,
  };
}

/** Temperatures (°C) of one loop's three nodes, advanced in time by step(). */
export class LoopThermal {
  electrode_C: number;
  fluid_C: number;
  magnet_C: number;
  private readonly p: ThermalParameters;

  constructor(p: ThermalParameters, initial_C: number) {
    this.p = p;
    this.electrode_C = initial_C;
    this.fluid_C = initial_C;
    this.magnet_C = initial_C;
  }

  /**
   * Advances dt seconds (explicit Euler; dt must stay well below the smallest R·C, here ~10 s) with
   * the powers held. `sinkFactor` multiplies every resistance to the sink.
   */
  step(dt: number, electrodePower_W: number, fluidPower_W: number, sink_C: number, sinkFactor: number): void {
    const p = this.p;
    const te = this.electrode_C, tf = this.fluid_C, tm = this.magnet_C;
    const qef = (te - tf) / p.electrodeToFluid_K_W;
    const qfm = (tf - tm) / p.fluidToMagnet_K_W;
    const qes = (te - sink_C) / (p.electrodeToSink_K_W * sinkFactor);
    const qfs = (tf - sink_C) / (p.fluidToSink_K_W * sinkFactor);
    const qms = (tm - sink_C) / (p.magnetToSink_K_W * sinkFactor);
    this.electrode_C = te + (dt * (electrodePower_W - qef - qes)) / p.electrodeCapacity_J_K;
    this.fluid_C = tf + (dt * (fluidPower_W + qef - qfm - qfs)) / p.fluidCapacity_J_K;
    this.magnet_C = tm + (dt * (qfm - qms)) / p.magnetCapacity_J_K;
  }
}
