import { http } from '../../lib/http';
import type { ChangePasswordInput } from './account.schema';

/** Change one's own password; the answer says how many other sessions ended. */
export function changePassword(input: ChangePasswordInput): Promise<{ changed: true; otherSessionsEnded: number }> {
  return http('/api/account/password', { method: 'POST', json: input });
}
