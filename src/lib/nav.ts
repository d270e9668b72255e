import type { Access } from './server/auth/roles';

/** One entry of the shell's navigation, shown only to those its rule allows. */
export interface NavEntry {
  href: string;
  label: string;
  access: Access;
}

/** The work of the flight team, in the order of a shift: what is flying, what tripped, what is next. */
export const NAV: NavEntry[] = [
  { href: '/', label: 'Fleet', access: 'signed-in' },
  { href: '/pass-watch', label: 'Pass watch', access: ['operator', 'analyst', 'engineer', 'admin'] },
  { href: '/trips', label: 'Trips', access: 'signed-in' },
  { href: '/passes', label: 'Passes', access: 'signed-in' },
  { href: '/uploads', label: 'Uploads', access: 'signed-in' },
  { href: '/roster', label: 'On call', access: 'signed-in' },
  { href: '/stations', label: 'Stations', access: 'signed-in' },
  { href: '/limits', label: 'Limit bench', access: ['engineer', 'admin'] },
  { href: '/docs/api', label: 'API', access: 'signed-in' },
  { href: '/account', label: 'Account', access: 'signed-in' },
];

/** The admin's pages, on a strip of their own under the main bar. */
export const ADMIN_NAV: NavEntry[] = [
  { href: '/admin/people', label: 'People', access: ['admin'] },
  { href: '/admin/tokens', label: 'Tokens', access: ['admin'] },
  { href: '/admin/audit', label: 'Audit log', access: ['admin'] },
  { href: '/admin/jobs', label: 'Job log', access: ['admin'] },
  { href: '/admin/outbox', label: 'Outbox', access: ['admin'] },
  { href: '/mailbox', label: 'Mailbox', access: ['admin'] },
];
