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
  '/api/people': { GET: ['admin'] },
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
};

/** The access rule for a route pattern and method, or null when there is none (deny). */
export function accessFor(routePattern: string, method: string): Access | null {
  const rule = routeRules[routePattern];
  if (!rule) return null;
  const m = (method === 'HEAD' ? 'GET' : method) as Method;
  return rule[m] ?? null;
}
