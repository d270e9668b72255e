import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { PersonRow } from '../../lib/server/people';
import type { Role } from '../../lib/server/db/schema';

export type { PersonRow };
export type PeopleResponse = { people: PersonRow[] };
export interface Invited {
  person: PersonRow;
  invitation: { expiresAt: string };
}

/** Everyone, as GET /api/people lists them. */
export const peopleQuery = () =>
  queryOptions({
    queryKey: ['people'],
    queryFn: () => http<PeopleResponse>('/api/people'),
  });

/** Invite someone; the one-time link goes out by mail. */
export function invitePerson(input: { name: string; email: string; roles: Role[] }): Promise<Invited> {
  return http<Invited>('/api/people', { method: 'POST', json: input });
}

/** Change roles and/or disable (true) or re-enable (false). */
export function updatePerson(id: string, patch: { roles?: Role[]; disabled?: boolean }): Promise<{ person: PersonRow; sessionsEnded: number }> {
  return http(`/api/people/${encodeURIComponent(id)}`, { method: 'PATCH', json: patch });
}

/** Send a fresh invitation (the earlier link stops working). */
export function resendInvitation(id: string): Promise<Invited> {
  return http<Invited>(`/api/people/${encodeURIComponent(id)}/invitation`, { method: 'POST' });
}
