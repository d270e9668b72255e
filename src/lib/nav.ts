import { accessFor } from './server/auth/access';
import type { Access } from './server/auth/roles';

/** One entry of the shell's navigation, shown only to those its page's route rule admits. */
export interface NavEntry {
  href: string;
  label: string;
  access: Access;
}

/**
 * A navigation entry whose visibility is the GET rule of its page in the route table, so the bar
 * never shows a link its reader would be refused (nor hides one they may use). A page without a
 * rule is a mistake in this list, caught when the module loads.
 */
export function navEntry(href: string, label: string): NavEntry {
  const access = accessFor(href, 'GET');
  if (!access) throw new Error(`navigation entry ${label} (${href}) has no GET rule in src/lib/server/auth/access.ts`);
  return { href, label, access };
}

/** The work of the flight team, in the order of a shift: what is flying, what tripped, what is next. */
export const NAV: NavEntry[] = [
  navEntry('/', 'Fleet'),
  navEntry('/pass-watch', 'Pass watch'),
  navEntry('/trips', 'Trips'),
  navEntry('/passes', 'Passes'),
  navEntry('/uploads', 'Uploads'),
  navEntry('/roster', 'On call'),
  navEntry('/stations', 'Stations'),
  navEntry('/limits', 'Limit bench'),
  navEntry('/docs/api', 'API'),
  navEntry('/account', 'Account'),
];

/** The admin's pages, on a strip of their own under the main bar. */
export const ADMIN_NAV: NavEntry[] = [
  navEntry('/admin/people', 'People'),
  navEntry('/admin/tokens', 'Tokens'),
  navEntry('/admin/audit', 'Audit log'),
  navEntry('/admin/jobs', 'Job log'),
  navEntry('/admin/outbox', 'Outbox'),
  navEntry('/mailbox', 'Mailbox'),
];
