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

export interface Database {
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
