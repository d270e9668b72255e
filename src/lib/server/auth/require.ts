import { HttpError } from '../http';
import type { Role, SessionUser } from './roles';

/** The signed-in user holding one of the roles, or a thrown 401/403. */
export function requireRole(locals: App.Locals, ...roles: Role[]): SessionUser {
  const user = locals.user;
  if (!user) throw new HttpError('UNAUTHORIZED', 'Sign in first.');
  if (roles.length && !roles.some((r) => user.roles.includes(r))) {
    throw new HttpError('FORBIDDEN', `This needs the ${roles.join(' or ')} role.`);
  }
  return user;
}
