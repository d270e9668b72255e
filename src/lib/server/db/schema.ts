import type { ColumnType, Generated, Insertable, Selectable } from 'kysely';

type Timestamp = ColumnType<Date, Date | string, Date | string>;
type CreatedAt = ColumnType<Date, Date | string | undefined, never>;

export const ROLES = ['operator', 'analyst', 'engineer', 'admin'] as const;
export type Role = (typeof ROLES)[number];

export interface AppUserTable {
  id: string;
  email: string;
  name: string;
  password_hash: string | null;
  disabled_at: Timestamp | null;
  created_at: CreatedAt;
}

export interface UserRoleTable {
  user_id: string;
  role: Role;
}

export interface UserSessionTable {
  id: string;
  user_id: string;
  expires_at: Timestamp;
}

export interface SignInAttemptTable {
  scope: 'account' | 'address';
  key: string;
  window_start: Timestamp;
  failures: Generated<number>;
}

export interface SpacecraftTable {
  id: Generated<number>;
  key: string;
  name: string;
  created_at: CreatedAt;
}

export interface SpacecraftSheetTable {
  id: Generated<number>;
  spacecraft_id: number;
  effective_from: Timestamp;
  /** The sheet JSON as validated by spacecraftSheetSchema. */
  sheet: ColumnType<unknown, string, string>;
  uploaded_by: string | null;
  uploaded_at: CreatedAt;
}

export interface GroundStationTable {
  id: Generated<number>;
  key: string;
  name: string;
  latitude_deg: number;
  longitude_deg: number;
  altitude_m: Generated<number>;
  elevation_mask_deg: Generated<number>;
}

export interface AuditLogTable {
  id: Generated<number>;
  at: CreatedAt;
  actor_id: string | null;
  action: string;
  target_type: string;
  target_id: string;
  detail: ColumnType<unknown, string | undefined, never>;
}

export interface Database extends TelemetryTables, AnalysisTables, MailTables, PassTables, PassLogTables, AdminTables, BenchTables, CasefileTables {
  app_user: AppUserTable;
  user_role: UserRoleTable;
  user_session: UserSessionTable;
  sign_in_attempt: SignInAttemptTable;
  spacecraft: SpacecraftTable;
  spacecraft_sheet: SpacecraftSheetTable;
  ground_station: GroundStationTable;
  audit_log: AuditLogTable;
}

export type AppUser = Selectable<AppUserTable>;
export type NewAppUser = Insertable<AppUserTable>;
export type Spacecraft = Selectable<SpacecraftTable>;
export type GroundStation = Selectable<GroundStationTable>;
export type NewAuditEntry = Insertable<AuditLogTable>;

export interface IngestTokenTable {
  id: Generated<number>;
  spacecraft_id: number;
  label: string;
  token_hash: string;
  token_hint: string;
  created_by: string | null;
  created_at: CreatedAt;
  last_used_at: Timestamp | null;
  revoked_at: Timestamp | null;
}

export interface PacketUploadTable {
  id: Generated<number>;
  spacecraft_id: number;
  file_name: string;
  stored_path: string;
  bytes: Generated<number>;
  sha256: string | null;
  station_id: number | null;
  uploaded_by: string | null;
  uploaded_at: CreatedAt;
  status: Generated<'receiving' | 'done' | 'failed'>;
  report: ColumnType<unknown, string | null | undefined, string | null>;
}

export interface IngestBatchTable {
  id: Generated<number>;
  spacecraft_id: number;
  station_id: number | null;
  upload_id: number | null;
  source: 'post' | 'upload';
  received_at: CreatedAt;
  bytes: number;
  accepted: number;
  duplicates: number;
  rejected: number;
  idle: number;
  realtime: number;
  playback: number;
  first_time_tag: number | null;
  last_time_tag: number | null;
  /** When the analysis took the batch in; null until then. */
  analysed_at: ColumnType<Date | null, Date | string | null | undefined, Date | string | null>;
  /** Failed analysis attempts; the batch is given up at the job's limit. */
  analysis_attempts: Generated<number>;
  analysis_error: ColumnType<string | null, string | null | undefined, string | null>;
}

interface PacketColumns {
  spacecraft_id: number;
  t: Timestamp;
  time_tag: number;
  seq: number;
  batch_id: number;
}

export interface AttitudeSampleTable extends PacketColumns {
  mode: number;
  rate_x_rad_s: number;
  rate_y_rad_s: number;
  rate_z_rad_s: number;
  q1: number;
  q2: number;
  q3: number;
  q4: number;
  mag_x_nt: number;
  mag_y_nt: number;
  mag_z_nt: number;
}

export interface LoopSampleTable extends PacketColumns {
  loop_id: number;
  status: number;
  commanded_current_a: number;
  measured_current_a: number;
  electrode_voltage_v: number;
  flow_velocity_m_s: number;
  pressure_rise_pa: number;
  fluid_temp_c: number;
  electrode_temp_c: number;
  magnet_temp_c: number;
}

export interface BurstCaptureTable extends PacketColumns {
  loop_id: number;
  channel: number;
  sample_rate_hz: number;
  sample_count: number;
  scale: number;
  offset_value: number;
  raw_samples: number[];
}

export interface EventReportTable extends PacketColumns {
  severity: number;
  code: number;
  loop_id: number | null;
  text: string;
}

export interface QuarantinePacketTable {
  id: Generated<number>;
  spacecraft_id: number;
  batch_id: number | null;
  received_at: CreatedAt;
  offset_bytes: number;
  reason: string;
  raw: Buffer;
}

export interface SequenceGapTable {
  id: Generated<number>;
  spacecraft_id: number;
  apid: number;
  from_seq: number;
  to_seq: number;
  missing: number;
  after_time_tag: number;
  before_time_tag: number;
  detected_at: CreatedAt;
  filled_at: Timestamp | null;
}

export interface TelemetryTables {
  ingest_token: IngestTokenTable;
  packet_upload: PacketUploadTable;
  ingest_batch: IngestBatchTable;
  attitude_sample: AttitudeSampleTable;
  loop_sample: LoopSampleTable;
  burst_capture: BurstCaptureTable;
  event_report: EventReportTable;
  quarantine_packet: QuarantinePacketTable;
  sequence_gap: SequenceGapTable;
}

type N = number | null;

export interface LoopWindowTable {
  spacecraft_id: number;
  loop_id: number;
  window_start: Timestamp;
  window_s: number;
  sheet_id: number | null;
  samples: number;
  current_mean_a: N; current_std_a: N; commanded_mean_a: N; flow_mean_m_s: N;
  kt_nm_per_a: N; kt_stderr_nm_per_a: N;
  effectiveness: N; effectiveness_stderr: N; compensated_effectiveness: N;
  pressure_constant_pa_per_a: N; pressure_constant_stderr_pa_per_a: N; pressure_effectiveness: N; pressure_mean_pa: N;
  resistance_ohm: N; joule_power_w: N; electrical_power_w: N;
  fluid_temp_mean_c: N; electrode_temp_mean_c: N; magnet_temp_mean_c: N;
  rate_of_rise_k_s: N; thermal_residual_k: N; time_to_temp_limit_s: N;
  momentum_mean_nms: N; momentum_abs_mean_nms: N; momentum_max_abs_nms: N;
  margin_in_use_pct: N; time_to_saturation_s: N;
  fluid_torque_mean_nm: N; fluid_torque_abs_mean_nm: N;
  torque_per_watt_nm_per_w: N; momentum_per_watt_nms_per_w: N;
  drift_ewma: N; drift_ewma_ucl: N; drift_ewma_lcl: N; drift_cusum_hi: N; drift_cusum_lo: N;
  analysed_at: CreatedAt;
}

export interface BodyWindowTable {
  spacecraft_id: number;
  window_start: Timestamp;
  window_s: number;
  samples: number;
  rate_mean_x_rad_s: N; rate_mean_y_rad_s: N; rate_mean_z_rad_s: N;
  body_momentum_x_nms: N; body_momentum_y_nms: N; body_momentum_z_nms: N;
  loop_momentum_x_nms: N; loop_momentum_y_nms: N; loop_momentum_z_nms: N;
  system_momentum_nms: N;
  ledger_x_nm: N; ledger_y_nm: N; ledger_z_nm: N;
  ledger_stderr_x_nm: N; ledger_stderr_y_nm: N; ledger_stderr_z_nm: N;
  ledger_residual_nm: N;
  mag_field_nt: N;
  analysed_at: CreatedAt;
}

export interface BurstAnalysisTable {
  spacecraft_id: number;
  loop_id: number;
  channel: number;
  t: Timestamp;
  sample_rate_hz: number;
  samples: number;
  mean: number;
  rms: number;
  top_peak_hz: N;
  top_peak_amplitude: N;
  band_power: N;
  peaks: ColumnType<unknown, string, string>;
  frequencies_hz: number[];
  psd: number[];
  analysed_at: CreatedAt;
}

export interface JobRunTable {
  id: Generated<number>;
  job: string;
  spacecraft_id: number | null;
  started_at: Timestamp;
  finished_at: Timestamp | null;
  windows: Generated<number>;
  rows_written: Generated<number>;
  detail: ColumnType<unknown, string | undefined, string>;
  error: string | null;
}

export type LimitSetStatus = 'draft' | 'in review' | 'active' | 'retired';

export interface LimitSetTable {
  id: Generated<number>;
  spacecraft_id: number;
  version: number;
  name: string;
  status: LimitSetStatus;
  notes: Generated<string>;
  created_by: string | null;
  created_at: CreatedAt;
  activated_at: Timestamp | null;
  retired_at: Timestamp | null;
}

export interface LimitRuleTable {
  id: Generated<number>;
  limit_set_id: number;
  quantity: string;
  loop_id: number | null;
  caution_high: N; warning_high: N; caution_low: N; warning_low: N; clear_high: N; clear_low: N;
  persistence: number;
  rationale: Generated<string>;
}

export type TripState = 'open' | 'acknowledged' | 'resolved';

export interface TripTable {
  id: Generated<number>;
  spacecraft_id: number;
  loop_id: number | null;
  kind: string;
  quantity: string;
  level: 'caution' | 'warning';
  side: 'high' | 'low';
  state: Generated<TripState>;
  limit_set_id: number | null;
  limit_set_version: number;
  rule_id: number | null;
  onset_at: Timestamp;
  raised_at: Timestamp;
  escalated_at: Timestamp | null;
  cleared_at: Timestamp | null;
  /** Set when the trip was closed by a limit-set handover rather than by the value returning within limits. */
  cleared_note: string | null;
  value: number;
  peak_value: number;
  limit_value: number;
  last_value: number;
  last_at: Timestamp;
  evidence: ColumnType<unknown, string, string>;
  acknowledged_by: string | null;
  acknowledged_at: Timestamp | null;
  acknowledge_note: string | null;
  resolved_by: string | null;
  resolved_at: Timestamp | null;
  resolution: string | null;
}

export interface RuleCursorTable {
  rule_id: number;
  loop_id: number;
  evaluated_through: Timestamp;
  state: ColumnType<unknown, string, string>;
}

export interface AnalysisTables {
  loop_window: LoopWindowTable;
  body_window: BodyWindowTable;
  burst_analysis: BurstAnalysisTable;
  job_run: JobRunTable;
  limit_set: LimitSetTable;
  limit_rule: LimitRuleTable;
  trip: TripTable;
  rule_cursor: RuleCursorTable;
}

export interface OutboxTable {
  id: Generated<number>;
  message_key: string;
  kind: string;
  to_addresses: string[];
  subject: string;
  text_body: string;
  html_body: string | null;
  trip_id: number | null;
  state: Generated<'queued' | 'sent' | 'failed'>;
  attempts: Generated<number>;
  next_attempt_at: ColumnType<Date, Date | string | undefined, Date | string>;
  last_error: string | null;
  created_at: CreatedAt;
  sent_at: Timestamp | null;
}

export interface OnCallShiftTable {
  id: Generated<number>;
  spacecraft_id: number;
  user_id: string;
  starts_at: Timestamp;
  ends_at: Timestamp;
  created_by: string | null;
  created_at: CreatedAt;
}

export interface MailDigestItemTable {
  id: Generated<number>;
  spacecraft_id: number;
  /** Null once the trip is deleted (ON DELETE SET NULL). */
  trip_id: number | null;
  period_start: Timestamp;
  to_addresses: string[];
  /** The trip's mail facts as JSON (times as ISO strings). */
  facts: ColumnType<unknown, string, string>;
  cleared_at: Timestamp | null;
  digested_at: Timestamp | null;
  outbox_id: number | null;
  created_at: CreatedAt;
}

export interface MailTables {
  outbox: OutboxTable;
  on_call_shift: OnCallShiftTable;
  mail_digest_item: MailDigestItemTable;
}

export interface PredictedPassTable {
  id: Generated<number>;
  spacecraft_id: number;
  station_id: number;
  /** The sheet whose element set predicted the pass (the one in force at AOS). */
  sheet_id: number | null;
  aos_at: Timestamp;
  tca_at: Timestamp;
  los_at: Timestamp;
  max_elevation_deg: number;
  aos_azimuth_deg: number;
  los_azimuth_deg: number;
  computed_at: ColumnType<Date, Date | string | undefined, Date | string>;
}

export interface PassHorizonTable {
  spacecraft_id: number;
  computed_at: Timestamp;
  /** Passes are stored up to here. */
  horizon_to: Timestamp;
  /** Digest of the stations and sheets the passes were computed from. */
  inputs: string;
}

export interface PassTables {
  predicted_pass: PredictedPassTable;
  pass_horizon: PassHorizonTable;
}

export interface LiveCounterTable {
  spacecraft_id: number;
  seq: number;
}

/** One stored ingest batch with its per-spacecraft event number, in commit order. */
export interface LiveBatchTable {
  spacecraft_id: number;
  seq: number;
  batch_id: number;
}

/** An operator's handover note on one pass. */
export interface PassNoteTable {
  id: Generated<number>;
  spacecraft_id: number;
  station_id: number;
  aos_at: Timestamp;
  los_at: Timestamp;
  note: string;
  author_id: string | null;
  created_at: CreatedAt;
}

export interface PassLogTables {
  live_counter: LiveCounterTable;
  live_batch: LiveBatchTable;
  pass_note: PassNoteTable;
}

/** A one-time link: an invitation or a password reset (the token's SHA-256 digest only). */
export interface UserTokenTable {
  id: Generated<number>;
  user_id: string;
  purpose: 'invite' | 'reset';
  token_hash: string;
  created_by: string | null;
  created_at: ColumnType<Date, Date | string | undefined, Date | string>;
  expires_at: Timestamp;
  used_at: Timestamp | null;
}

/** Password-reset requests per window, by the address asked for and by the client's address. */
export interface PasswordResetAttemptTable {
  scope: 'email' | 'address';
  key: string;
  window_start: Timestamp;
  requests: Generated<number>;
}

export interface AdminTables {
  user_token: UserTokenTable;
  password_reset_attempt: PasswordResetAttemptTable;
}

export type BacktestStatus = 'queued' | 'running' | 'done' | 'cancelled' | 'failed';

/** A backtest of a limit set over stored history: a background job with progress and a kept result. */
export interface BacktestTable {
  id: Generated<number>;
  limit_set_id: number;
  /** The set it is compared with (the active one when it was asked for), if any. */
  baseline_set_id: number | null;
  spacecraft_id: number;
  from_at: Timestamp;
  to_at: Timestamp;
  /** Digest of the rules replayed (a result older than the draft's last edit says so). */
  rules_digest: string;
  status: Generated<BacktestStatus>;
  progress: Generated<number>;
  /** The replay's trips, rule summaries and chart series (see BacktestResult). */
  result: ColumnType<unknown, string | null | undefined, string | null>;
  error: string | null;
  requested_by: string | null;
  created_at: CreatedAt;
  started_at: Timestamp | null;
  finished_at: Timestamp | null;
}

/** One step of a limit set's review: submitted, approved, or returned with comments. */
export interface LimitSetReviewTable {
  id: Generated<number>;
  limit_set_id: number;
  action: 'submitted' | 'approved' | 'returned';
  actor_id: string | null;
  comment: Generated<string>;
  at: CreatedAt;
}

export interface BenchTables {
  backtest: BacktestTable;
  limit_set_review: LimitSetReviewTable;
}

/** The saved conclusion of a trip's Casefile (the resolve action requires one). */
export interface CasefileTable {
  trip_id: number;
  conclusion: string;
  updated_by: string | null;
  updated_at: ColumnType<Date, Date | string | undefined, Date | string>;
}

/** A note in a trip's Casefile thread. */
export interface TripNoteTable {
  id: Generated<number>;
  trip_id: number;
  author_id: string | null;
  body: string;
  created_at: CreatedAt;
}

/** A file attached to a Casefile note, stored under UPLOAD_DIR/attachments. */
export interface TripAttachmentTable {
  id: Generated<number>;
  trip_id: number;
  note_id: number;
  file_name: string;
  media_type: 'image/png' | 'image/jpeg' | 'text/csv' | 'application/pdf';
  bytes: number;
  sha256: string;
  stored_path: string;
  created_at: CreatedAt;
}

export interface CasefileTables {
  casefile: CasefileTable;
  trip_note: TripNoteTable;
  trip_attachment: TripAttachmentTable;
}
