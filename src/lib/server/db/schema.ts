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

export interface Database extends TelemetryTables {
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
