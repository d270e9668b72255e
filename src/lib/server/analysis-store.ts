import type pg from 'pg';
import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { EPOCH_2000_UNIX_S } from '../telemetry';
import type { BurstInput, LoopInput, SpanAnalysis, SpanInput } from '../physics/analysis';

type Db = Kysely<Database> | Transaction<Database>;

/** Time tag (2^-16 s since 2000-01-01) for a Unix time in seconds. */
export const timeTagOf = (unixS: number): number => Math.round((unixS - EPOCH_2000_UNIX_S) * 65536);
/** Unix seconds of a time tag. */
export const unixSecondsOf = (tt: number): number => EPOCH_2000_UNIX_S + tt / 65536;

/** Load the raw telemetry of [fromS, toS) into the typed arrays the physics core reads. */
export async function loadSpanInput(pool: pg.Pool, spacecraftId: number, fromS: number, toS: number): Promise<SpanInput> {
  const lo = timeTagOf(fromS);
  const hi = timeTagOf(toS);
  const tFrom = new Date(fromS * 1000 - 1);
  const tTo = new Date(toS * 1000 + 1);
  const [att, loops, bursts] = await Promise.all([
    pool.query<unknown[]>({
      text: `SELECT time_tag, rate_x_rad_s, rate_y_rad_s, rate_z_rad_s, mag_x_nt, mag_y_nt, mag_z_nt FROM attitude_sample
             WHERE spacecraft_id = $1 AND time_tag >= $2 AND time_tag < $3 AND t >= $4 AND t <= $5 ORDER BY time_tag, seq`,
      values: [spacecraftId, lo, hi, tFrom, tTo],
      rowMode: 'array',
    }),
    pool.query<unknown[]>({
      text: `SELECT loop_id, time_tag, measured_current_a, electrode_voltage_v, flow_velocity_m_s, pressure_rise_pa, fluid_temp_c, electrode_temp_c, magnet_temp_c, commanded_current_a
             FROM loop_sample WHERE spacecraft_id = $1 AND time_tag >= $2 AND time_tag < $3 AND t >= $4 AND t <= $5 ORDER BY loop_id, time_tag, seq`,
      values: [spacecraftId, lo, hi, tFrom, tTo],
      rowMode: 'array',
    }),
    pool.query<unknown[]>({
      text: `SELECT loop_id, time_tag, channel, sample_rate_hz, scale, offset_value, raw_samples FROM burst_capture
             WHERE spacecraft_id = $1 AND time_tag >= $2 AND time_tag < $3 AND t >= $4 AND t <= $5 ORDER BY time_tag, seq`,
      values: [spacecraftId, lo, hi, tFrom, tTo],
      rowMode: 'array',
    }),
  ]);
  const n = att.rows.length;
  const attitude = {
    t_s: new Float64Array(n),
    rate_x: new Float32Array(n),
    rate_y: new Float32Array(n),
    rate_z: new Float32Array(n),
    mag_x: new Float32Array(n),
    mag_y: new Float32Array(n),
    mag_z: new Float32Array(n),
  };
  att.rows.forEach((r, i) => {
    attitude.t_s[i] = unixSecondsOf(Number(r[0]));
    attitude.rate_x[i] = r[1] as number;
    attitude.rate_y[i] = r[2] as number;
    attitude.rate_z[i] = r[3] as number;
    attitude.mag_x[i] = r[4] as number;
    attitude.mag_y[i] = r[5] as number;
    attitude.mag_z[i] = r[6] as number;
  });
  const byLoop = new Map<number, unknown[][]>();
  for (const r of loops.rows) {
    const id = r[0] as number;
    let list = byLoop.get(id);
    if (!list) byLoop.set(id, (list = []));
    list.push(r);
  }
  const loopInputs: LoopInput[] = [...byLoop.entries()].map(([loopId, rows]) => {
    const m = rows.length;
    const L: LoopInput = {
      loopId,
      t_s: new Float64Array(m),
      current_a: new Float32Array(m),
      voltage_v: new Float32Array(m),
      flow_m_s: new Float32Array(m),
      pressure_pa: new Float32Array(m),
      fluidTemp_c: new Float32Array(m),
      electrodeTemp_c: new Float32Array(m),
      magnetTemp_c: new Float32Array(m),
      commanded_a: new Float32Array(m),
    };
    rows.forEach((r, i) => {
      L.t_s[i] = unixSecondsOf(Number(r[1]));
      L.current_a[i] = r[2] as number;
      L.voltage_v[i] = r[3] as number;
      L.flow_m_s[i] = r[4] as number;
      L.pressure_pa[i] = r[5] as number;
      L.fluidTemp_c[i] = r[6] as number;
      L.electrodeTemp_c[i] = r[7] as number;
      L.magnetTemp_c[i] = r[8] as number;
      L.commanded_a[i] = r[9] as number;
    });
    return L;
  });
  const burstInputs: BurstInput[] = bursts.rows.map((r) => {
    const raw = r[6] as number[];
    const scale = r[4] as number;
    const offset = r[5] as number;
    const values = new Float32Array(raw.length);
    for (let i = 0; i < raw.length; i++) values[i] = raw[i]! * scale + offset;
    return { loopId: r[0] as number, t_s: unixSecondsOf(Number(r[1])), channel: (r[2] as number) === 1 ? 1 : 0, sampleRate_hz: r[3] as number, values };
  });
  return { attitude, loops: loopInputs, bursts: burstInputs };
}

const LOOP_COLUMNS = {
  samples: 'samples',
  currentMean_a: 'current_mean_a',
  currentStd_a: 'current_std_a',
  commandedMean_a: 'commanded_mean_a',
  flowMean_m_s: 'flow_mean_m_s',
  kT_Nm_per_a: 'kt_nm_per_a',
  kTStdErr_Nm_per_a: 'kt_stderr_nm_per_a',
  effectiveness: 'effectiveness',
  effectivenessStdErr: 'effectiveness_stderr',
  compensatedEffectiveness: 'compensated_effectiveness',
  pressureConstant_pa_per_a: 'pressure_constant_pa_per_a',
  pressureConstantStdErr_pa_per_a: 'pressure_constant_stderr_pa_per_a',
  pressureEffectiveness: 'pressure_effectiveness',
  pressureMean_pa: 'pressure_mean_pa',
  resistance_ohm: 'resistance_ohm',
  joulePower_w: 'joule_power_w',
  electricalPower_w: 'electrical_power_w',
  fluidTempMean_c: 'fluid_temp_mean_c',
  electrodeTempMean_c: 'electrode_temp_mean_c',
  magnetTempMean_c: 'magnet_temp_mean_c',
  rateOfRise_k_s: 'rate_of_rise_k_s',
  thermalResidual_k: 'thermal_residual_k',
  timeToTempLimit_s: 'time_to_temp_limit_s',
  momentumMean_Nms: 'momentum_mean_nms',
  momentumAbsMean_Nms: 'momentum_abs_mean_nms',
  momentumMaxAbs_Nms: 'momentum_max_abs_nms',
  marginInUse_pct: 'margin_in_use_pct',
  timeToSaturation_s: 'time_to_saturation_s',
  fluidTorqueMean_Nm: 'fluid_torque_mean_nm',
  fluidTorqueAbsMean_Nm: 'fluid_torque_abs_mean_nm',
  torquePerWatt_Nm_per_w: 'torque_per_watt_nm_per_w',
  momentumPerWatt_Nms_per_w: 'momentum_per_watt_nms_per_w',
} as const;

async function upsertRows(db: Db, table: string, key: string[], rows: Record<string, unknown>[]): Promise<number> {
  if (!rows.length) return 0;
  const cols = Object.keys(rows[0]!);
  const updates = cols.filter((c) => !key.includes(c));
  let n = 0;
  for (let i = 0; i < rows.length; i += 400) {
    const slice = rows.slice(i, i + 400);
    const values = sql.join(slice.map((r) => sql`(${sql.join(cols.map((c) => r[c]))})`));
    await sql`INSERT INTO ${sql.table(table)} (${sql.join(cols.map((c) => sql.ref(c)))}) VALUES ${values}
      ON CONFLICT (${sql.join(key.map((c) => sql.ref(c)))}) DO UPDATE SET ${sql.join(updates.map((c) => sql`${sql.ref(c)} = excluded.${sql.ref(c)}`))}, analysed_at = now()`.execute(db);
    n += slice.length;
  }
  return n;
}

/** Store the windows of an analysis whose start lies in [fromS, toS); returns rows written. */
export async function storeSpanAnalysis(db: Db, spacecraftId: number, sheetId: number | null, a: SpanAnalysis, fromS: number, toS: number): Promise<{ rows: number; windows: number }> {
  const inside = (s: number) => s >= fromS && s < toS;
  const loopRows: Record<string, unknown>[] = [];
  for (const L of a.loops) {
    for (const w of L.windows) {
      if (!inside(w.start_s)) continue;
      const row: Record<string, unknown> = { spacecraft_id: spacecraftId, loop_id: w.loopId, window_start: new Date(w.start_s * 1000), window_s: a.window_s, sheet_id: sheetId };
      for (const [k, col] of Object.entries(LOOP_COLUMNS)) row[col] = w[k as keyof typeof LOOP_COLUMNS];
      loopRows.push(row);
    }
  }
  const bodyRows = a.body
    .filter((b) => inside(b.start_s))
    .map((b) => ({
      spacecraft_id: spacecraftId,
      window_start: new Date(b.start_s * 1000),
      window_s: a.window_s,
      samples: b.samples,
      rate_mean_x_rad_s: b.rateMean_rad_s?.[0] ?? null,
      rate_mean_y_rad_s: b.rateMean_rad_s?.[1] ?? null,
      rate_mean_z_rad_s: b.rateMean_rad_s?.[2] ?? null,
      body_momentum_x_nms: b.bodyMomentum_Nms?.[0] ?? null,
      body_momentum_y_nms: b.bodyMomentum_Nms?.[1] ?? null,
      body_momentum_z_nms: b.bodyMomentum_Nms?.[2] ?? null,
      loop_momentum_x_nms: b.loopMomentum_Nms?.[0] ?? null,
      loop_momentum_y_nms: b.loopMomentum_Nms?.[1] ?? null,
      loop_momentum_z_nms: b.loopMomentum_Nms?.[2] ?? null,
      system_momentum_nms: b.systemMomentumMagnitude_Nms,
      ledger_x_nm: b.ledgerResidual_Nm?.[0] ?? null,
      ledger_y_nm: b.ledgerResidual_Nm?.[1] ?? null,
      ledger_z_nm: b.ledgerResidual_Nm?.[2] ?? null,
      ledger_stderr_x_nm: b.ledgerStdErr_Nm?.[0] ?? null,
      ledger_stderr_y_nm: b.ledgerStdErr_Nm?.[1] ?? null,
      ledger_stderr_z_nm: b.ledgerStdErr_Nm?.[2] ?? null,
      ledger_residual_nm: b.ledgerResidualMagnitude_Nm,
      mag_field_nt: b.magField_nT,
    }));
  const burstRows = a.bursts
    .filter((b) => inside(b.t_s))
    .map((b) => {
      const top = [...b.peaks].sort((x, y) => y.amplitude - x.amplitude)[0];
      let band = 0;
      for (let k = 1; k < b.psd.density.length; k++) band += b.psd.density[k]! * b.psd.df_hz;
      return {
        spacecraft_id: spacecraftId,
        loop_id: b.loopId,
        channel: b.channel,
        t: new Date(b.t_s * 1000),
        sample_rate_hz: b.sampleRate_hz,
        samples: b.samples,
        mean: b.mean,
        rms: b.rms,
        top_peak_hz: top?.frequency_hz ?? null,
        top_peak_amplitude: top?.amplitude ?? 0,
        band_power: band,
        peaks: JSON.stringify(b.peaks.slice(0, 12)),
        frequencies_hz: sql`${'{' + Array.from(b.psd.freq_hz).join(',') + '}'}::real[]`,
        psd: sql`${'{' + Array.from(b.psd.density).map((x) => (Number.isFinite(x) ? x : 0)).join(',') + '}'}::real[]`,
      };
    });
  const rows =
    (await upsertRows(db, 'loop_window', ['spacecraft_id', 'loop_id', 'window_start'], loopRows)) +
    (await upsertRows(db, 'body_window', ['spacecraft_id', 'window_start'], bodyRows)) +
    (await upsertRows(db, 'burst_analysis', ['spacecraft_id', 'loop_id', 'channel', 't'], burstRows));
  return { rows, windows: bodyRows.length + loopRows.length };
}
