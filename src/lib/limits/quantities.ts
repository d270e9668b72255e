/**
 * The quantities a limit may name: every derived per-window figure and the raw channels of the
 * telemetry contract. Each maps to the kind of trip it raises.
 */
export type TripKind =
  | 'torque-constant-drift'
  | 'temperature-rise'
  | 'flow-pulsation'
  | 'momentum-margin'
  | 'ledger-residual'
  | 'channel-limit'
  | 'telemetry-gap';

export const TRIP_KINDS: readonly TripKind[] = [
  'torque-constant-drift',
  'temperature-rise',
  'flow-pulsation',
  'momentum-margin',
  'ledger-residual',
  'channel-limit',
  'telemetry-gap',
];

export interface QuantityInfo {
  key: string;
  label: string;
  unit: string;
  /** loop: per loop (a limit names a loop or all loops); body: whole spacecraft. */
  scope: 'loop' | 'body';
  /** Where the series comes from: per-window analysis, raw samples, bursts, or link bookkeeping. */
  source: 'loop_window' | 'body_window' | 'loop_sample' | 'attitude_sample' | 'burst_analysis' | 'link';
  /**
   * The column of the source's table the trip engine reads (loop_window, body_window, loop_sample,
   * attitude_sample, burst_analysis); for `link` a name the engine computes by key.
   */
  column: string;
  kind: TripKind;
}

const q = (key: string, label: string, unit: string, scope: QuantityInfo['scope'], source: QuantityInfo['source'], column: string, kind: TripKind): QuantityInfo => ({ key, label, unit, scope, source, column, kind });

export const QUANTITIES: readonly QuantityInfo[] = [
  q('effectiveness', 'Effectiveness (kT / ideal)', '', 'loop', 'loop_window', 'effectiveness', 'torque-constant-drift'),
  q('compensated_effectiveness', 'Effectiveness, magnet-temperature compensated', '', 'loop', 'loop_window', 'compensated_effectiveness', 'torque-constant-drift'),
  q('drift_cusum_lo', 'Drift CUSUM, downward', 'σ', 'loop', 'loop_window', 'drift_cusum_lo', 'torque-constant-drift'),
  q('drift_cusum_hi', 'Drift CUSUM, upward', 'σ', 'loop', 'loop_window', 'drift_cusum_hi', 'torque-constant-drift'),
  q('drift_ewma', 'Drift EWMA of compensated effectiveness', '', 'loop', 'loop_window', 'drift_ewma', 'torque-constant-drift'),
  q('kt_nm_per_a', 'Torque constant kT', 'N·m/A', 'loop', 'loop_window', 'kt_nm_per_a', 'torque-constant-drift'),
  q('kt_stderr_nm_per_a', 'Torque constant, standard error', 'N·m/A', 'loop', 'loop_window', 'kt_stderr_nm_per_a', 'torque-constant-drift'),
  q('effectiveness_stderr', 'Effectiveness, standard error', '', 'loop', 'loop_window', 'effectiveness_stderr', 'torque-constant-drift'),
  q('pressure_constant_stderr_pa_per_a', 'Pump-pressure constant, standard error', 'Pa/A', 'loop', 'loop_window', 'pressure_constant_stderr_pa_per_a', 'torque-constant-drift'),
  q('pressure_effectiveness', 'Pump-pressure constant / ideal', '', 'loop', 'loop_window', 'pressure_effectiveness', 'torque-constant-drift'),
  q('resistance_ohm', 'Electrode-circuit resistance', 'Ω', 'loop', 'loop_window', 'resistance_ohm', 'temperature-rise'),
  q('joule_power_w', 'Joule power', 'W', 'loop', 'loop_window', 'joule_power_w', 'temperature-rise'),
  q('electrode_temp_mean_c', 'Electrode temperature (window mean)', '°C', 'loop', 'loop_window', 'electrode_temp_mean_c', 'temperature-rise'),
  q('rate_of_rise_k_s', 'Electrode temperature rate of rise', 'K/s', 'loop', 'loop_window', 'rate_of_rise_k_s', 'temperature-rise'),
  q('thermal_residual_k', 'Thermal-model residual', 'K', 'loop', 'loop_window', 'thermal_residual_k', 'temperature-rise'),
  q('margin_in_use_pct', 'Momentum margin in use', '%', 'loop', 'loop_window', 'margin_in_use_pct', 'momentum-margin'),
  q('pulsation_peak', 'Pulsation: largest spectral peak amplitude', 'Pa', 'loop', 'burst_analysis', 'top_peak_amplitude', 'flow-pulsation'),
  q('pulsation_band_power', 'Pulsation: band power', 'Pa²', 'loop', 'burst_analysis', 'band_power', 'flow-pulsation'),
  q('loop_momentum_mean_nms', 'Loop momentum (window mean)', 'N·m·s', 'loop', 'loop_window', 'momentum_mean_nms', 'momentum-margin'),
  q('loop_momentum_max_abs_nms', 'Loop momentum, largest |h| in the window', 'N·m·s', 'loop', 'loop_window', 'momentum_max_abs_nms', 'momentum-margin'),
  q('ledger_residual_nm', 'Momentum ledger residual |τ_ext|', 'N·m', 'body', 'body_window', 'ledger_residual_nm', 'ledger-residual'),
  q('system_momentum_nms', 'System momentum |H|', 'N·m·s', 'body', 'body_window', 'system_momentum_nms', 'momentum-margin'),
  q('ledger_stderr_x_nm', 'Momentum ledger standard error x', 'N·m', 'body', 'body_window', 'ledger_stderr_x_nm', 'ledger-residual'),
  q('ledger_stderr_y_nm', 'Momentum ledger standard error y', 'N·m', 'body', 'body_window', 'ledger_stderr_y_nm', 'ledger-residual'),
  q('ledger_stderr_z_nm', 'Momentum ledger standard error z', 'N·m', 'body', 'body_window', 'ledger_stderr_z_nm', 'ledger-residual'),
  q('commanded_current_a', 'Commanded pump current', 'A', 'loop', 'loop_sample', 'commanded_current_a', 'channel-limit'),
  q('measured_current_a', 'Measured pump current', 'A', 'loop', 'loop_sample', 'measured_current_a', 'channel-limit'),
  q('electrode_voltage_v', 'Electrode voltage', 'V', 'loop', 'loop_sample', 'electrode_voltage_v', 'channel-limit'),
  q('flow_velocity_m_s', 'Flow velocity', 'm/s', 'loop', 'loop_sample', 'flow_velocity_m_s', 'channel-limit'),
  q('pressure_rise_pa', 'Pump pressure rise', 'Pa', 'loop', 'loop_sample', 'pressure_rise_pa', 'channel-limit'),
  q('fluid_temp_c', 'Fluid temperature', '°C', 'loop', 'loop_sample', 'fluid_temp_c', 'channel-limit'),
  q('electrode_temp_c', 'Electrode temperature', '°C', 'loop', 'loop_sample', 'electrode_temp_c', 'channel-limit'),
  q('magnet_temp_c', 'Magnet temperature', '°C', 'loop', 'loop_sample', 'magnet_temp_c', 'channel-limit'),
  q('rate_x_rad_s', 'Body rate x', 'rad/s', 'body', 'attitude_sample', 'rate_x_rad_s', 'channel-limit'),
  q('rate_y_rad_s', 'Body rate y', 'rad/s', 'body', 'attitude_sample', 'rate_y_rad_s', 'channel-limit'),
  q('rate_z_rad_s', 'Body rate z', 'rad/s', 'body', 'attitude_sample', 'rate_z_rad_s', 'channel-limit'),
  q('mag_x_nt', 'Magnetometer x', 'nT', 'body', 'attitude_sample', 'mag_x_nt', 'channel-limit'),
  q('mag_y_nt', 'Magnetometer y', 'nT', 'body', 'attitude_sample', 'mag_y_nt', 'channel-limit'),
  q('mag_z_nt', 'Magnetometer z', 'nT', 'body', 'attitude_sample', 'mag_z_nt', 'channel-limit'),
  q('data_age_s', 'Age of the newest housekeeping', 's', 'body', 'link', 'data_age_s', 'telemetry-gap'),
  q('missing_packets', 'Packets missing in sequence gaps (per window)', 'packets', 'body', 'link', 'missing_packets', 'telemetry-gap'),
];

const BY_KEY = new Map(QUANTITIES.map((x) => [x.key, x]));

/** The quantity with this key, or undefined. */
export function quantityInfo(key: string): QuantityInfo | undefined {
  return BY_KEY.get(key);
}
