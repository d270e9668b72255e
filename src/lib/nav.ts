import type { Access } from './server/auth/roles';

/** The shell's navigation; each entry is shown only to those its rule allows. */
export const NAV: { href: string; label: string; access: Access }[] = [
  { href: '/', label: 'Fleet', access: 'signed-in' },
  { href: '/trips', label: 'Trips', access: 'signed-in' },
  { href: '/admin/people', label: 'People', access: ['admin'] },
  { href: '/uploads', label: 'Uploads', access: 'signed-in' },
  { href: '/admin/tokens', label: 'Tokens', access: ['admin'] },
  { href: '/roster', label: 'On call', access: 'signed-in' },
  { href: '/admin/jobs', label: 'Job log', access: ['admin'] },
  { href: '/admin/outbox', label: 'Outbox', access: ['admin'] },
  { href: '/mailbox', label: 'Mailbox', access: ['admin'] },
  { href: '/passes', label: 'Passes', access: 'signed-in' },
  { href: '/pass-watch', label: 'Pass watch', access: ['operator', 'analyst', 'engineer', 'admin'] },
  { href: '/stations', label: 'Stations', access: 'signed-in' },
  { href: '/limits', label: 'Limit bench', access: ['engineer', 'admin'] },
  { href: '/admin/audit', label: 'Audit log', access: ['admin'] },
  { href: '/docs/api', label: 'API', access: 'signed-in' },
  { href: '/account', label: 'Account', access: 'signed-in' },
];
