import { ROLES, type Role } from '../db/schema';

/** Who may reach a route: anyone, anyone signed in, or holders of at least one listed role. */
export type Access = 'public' | 'signed-in' | readonly Role[];

export interface SessionUser {
  id: string;
  email: string;
  name: string;
  roles: Role[];
}

/** True when the user may pass the access rule. */
export function allows(access: Access, user: SessionUser | null): boolean {
  if (access === 'public') return true;
  if (!user) return false;
  if (access === 'signed-in') return true;
  return access.some((role) => user.roles.includes(role));
}

/** Narrow an arbitrary string to a role. */
export function isRole(value: string): value is Role {
  return (ROLES as readonly string[]).includes(value);
}

export { ROLES, type Role };
