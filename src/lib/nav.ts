import type { Access } from './server/auth/roles';

/** The shell's navigation; each entry is shown only to those its rule allows. */
export const NAV: { href: string; label: string; access: Access }[] = [
  { href: '/', label: 'Fleet', access: 'signed-in' },
  { href: '/admin/people', label: 'People', access: ['admin'] },
];
