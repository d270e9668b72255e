import type { Access } from './roles';

type Method = 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE';

/**
 * Deny by default: every route pattern of src/pages has a rule here, per method. A route with no
 * rule is refused (and the route × role test fails until one is written).
 */
export const routeRules: Record<string, Partial<Record<Method, Access>>> = {
  '/sign-in': { GET: 'public', POST: 'public' },
  '/forbidden': { GET: 'signed-in' },
  '/api/auth/sign-in': { POST: 'public' },
  '/api/auth/sign-out': { POST: 'signed-in' },
  '/api/me': { GET: 'signed-in' },
  '/': { GET: 'signed-in' },
  '/api/spacecraft': { GET: 'signed-in', POST: ['engineer', 'admin'] },
  '/admin/people': { GET: ['admin'] },
  '/api/people': { GET: ['admin'], POST: ['admin'] },
  // Telemetry ingest authenticates by ingest token (checked in the endpoint), not by session.
  '/api/ingest': { POST: 'public' },
  '/api/uploads': { GET: 'signed-in' },
  '/api/uploads/packets': { POST: ['operator', 'engineer', 'admin'] },
  '/api/uploads/[id]/reingest': { POST: ['operator', 'engineer', 'admin'] },
  '/api/spacecraft/[key]/sheets': { GET: 'signed-in', POST: ['engineer', 'admin'] },
  '/api/spacecraft/[key]/tokens': { GET: ['admin'], POST: ['admin'] },
  '/api/spacecraft/[key]/tokens/[id]': { DELETE: ['admin'] },
  // Trips and the scheduled jobs.
  '/trips': { GET: 'signed-in' },
  '/trips/[id]': { GET: 'signed-in' },
  '/api/trips': { GET: 'signed-in' },
  '/api/trips/[id]': { GET: 'signed-in' },
  '/api/trips/[id]/acknowledge': { POST: ['operator', 'analyst', 'engineer', 'admin'] },
  '/api/trips/[id]/resolve': { POST: ['operator', 'analyst', 'engineer', 'admin'] },
  // Casefile: everyone signed in reads it; analysts and engineers add notes; the conclusion is
  // written by whoever may resolve the trip (RESOLVE_RULE, checked per kind in the endpoint).
  '/trips/[id]/report': { GET: 'signed-in' },
  '/api/trips/[id]/evidence': { GET: 'signed-in' },
  '/api/trips/[id]/evidence.csv': { GET: 'signed-in' },
  '/api/trips/[id]/raw': { GET: 'signed-in' },
  '/api/trips/[id]/notes': { GET: 'signed-in', POST: ['analyst', 'engineer'] },
  '/api/trips/[id]/attachments/[attachment]': { GET: 'signed-in' },
  '/api/trips/[id]/conclusion': { PUT: ['operator', 'analyst', 'engineer', 'admin'] },
  '/api/jobs': { GET: ['admin'] },
  '/api/jobs/run': { POST: ['engineer', 'admin'] },
  '/admin/jobs': { GET: ['admin'] },
  '/uploads': { GET: 'signed-in' },
  '/spacecraft/[key]': { GET: 'signed-in' },
  '/spacecraft/[key]/sheets': { GET: 'signed-in' },
  '/admin/tokens': { GET: ['admin'] },
  '/api/spacecraft/[key]/link': { GET: 'signed-in' },
  // Mail: Mailbox and Outbox for admins; everyone signed in sees who is on call, operators and admins edit it.
  '/mailbox': { GET: ['admin'] },
  '/api/mailbox': { GET: ['admin'] },
  '/api/mailbox/[id]': { GET: ['admin'] },
  '/admin/outbox': { GET: ['admin'] },
  '/api/outbox': { GET: ['admin'] },
  '/roster': { GET: 'signed-in' },
  '/roster/[key]': { GET: 'signed-in' },
  '/api/roster/[key]': { GET: 'signed-in', POST: ['operator', 'admin'] },
  '/api/roster/[key]/[id]': { DELETE: ['operator', 'admin'] },
  // Passes and ground stations: everyone signed in sees them; engineers and admins edit stations.
  '/passes': { GET: 'signed-in' },
  '/stations': { GET: 'signed-in' },
  '/api/passes': { GET: 'signed-in' },
  '/api/stations': { GET: 'signed-in', POST: ['engineer', 'admin'] },
  '/api/stations/[key]': { PATCH: ['engineer', 'admin'], DELETE: ['engineer', 'admin'] },
  // Pass watch: the live view, its event stream and the pass log.
  '/pass-watch': { GET: 'signed-in' },
  '/pass-watch/[key]': { GET: ['operator', 'analyst', 'engineer', 'admin'] },
  '/api/live/[key]': { GET: ['operator', 'analyst', 'engineer', 'admin'] },
  '/api/pass-log/[key]': { GET: 'signed-in', POST: ['operator', 'analyst', 'engineer', 'admin'] },
  // Limit bench: everyone signed in reads limit sets and their history; engineers and admins draft, review and backtest.
  '/limits': { GET: ['engineer', 'admin'] },
  '/limits/[key]': { GET: ['engineer', 'admin'] },
  '/api/limit-sets': { GET: 'signed-in', POST: ['engineer', 'admin'] },
  '/api/limit-sets/[id]': { GET: 'signed-in', PUT: ['engineer', 'admin'] },
  '/api/limit-sets/[id]/diff': { GET: 'signed-in' },
  '/api/limit-sets/[id]/submit': { POST: ['engineer', 'admin'] },
  '/api/limit-sets/[id]/approve': { POST: ['engineer', 'admin'] },
  '/api/limit-sets/[id]/return': { POST: ['engineer', 'admin'] },
  '/api/limit-sets/[id]/backtests': { GET: ['engineer', 'admin'], POST: ['engineer', 'admin'] },
  '/api/backtests/[id]': { GET: ['engineer', 'admin'] },
  '/api/backtests/[id]/cancel': { POST: ['engineer', 'admin'] },
  // People administration, the audit log, one's own account, password resets and the API description.
  '/admin/audit': { GET: ['admin'] },
  '/api/people/[id]': { PATCH: ['admin'] },
  '/api/people/[id]/invitation': { POST: ['admin'] },
  '/api/audit': { GET: ['admin'] },
  '/account': { GET: 'signed-in' },
  '/api/account/password': { POST: 'signed-in' },
  // Reached from mail and the sign-in page without a session; the one-time token authorises.
  '/forgot-password': { GET: 'public', POST: 'public' },
  '/reset-password/[token]': { GET: 'public', POST: 'public' },
  '/invite/[token]': { GET: 'public', POST: 'public' },
  '/api/password-reset': { POST: 'public' },
  '/api/password-reset/confirm': { POST: 'public' },
  '/docs/api': { GET: 'signed-in' },
  '/api/openapi.json': { GET: 'signed-in' },
};

/** The access rule for a route pattern and method, or null when there is none (deny). */
export function accessFor(routePattern: string, method: string): Access | null {
  const rule = routeRules[routePattern];
  if (!rule) return null;
  const m = (method === 'HEAD' ? 'GET' : method) as Method;
  return rule[m] ?? null;
}
