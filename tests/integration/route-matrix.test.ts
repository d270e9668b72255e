import fs from 'node:fs';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { Client, clientAs, type TestRole } from './support';

/**
 * Route × role matrix. Every route file under src/pages must appear here with every method it
 * exports; the expected access is written here independently of the app's own rule table.
 * 'public' = anyone; 'signed-in' = any role; else the roles that may pass.
 */
type Who = 'public' | 'signed-in' | TestRole[];
interface Entry {
  /** A concrete path to request (route params filled in). */
  path: string;
  methods: Partial<Record<'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE', Who>>;
  /** The status an allowed caller gets when it is not an ordinary success (the 403 page itself). */
  allowedStatus?: number;
}

export const MATRIX: Record<string, Entry> = {
  '/': { path: '/', methods: { GET: 'signed-in' } },
  '/sign-in': { path: '/sign-in', methods: { GET: 'public', POST: 'public' } },
  '/forbidden': { path: '/forbidden', methods: { GET: 'signed-in' }, allowedStatus: 403 },
  '/admin/people': { path: '/admin/people', methods: { GET: ['admin'] } },
  '/api/auth/sign-in': { path: '/api/auth/sign-in', methods: { POST: 'public' } },
  '/api/auth/sign-out': { path: '/api/auth/sign-out', methods: { POST: 'signed-in' } },
  '/api/me': { path: '/api/me', methods: { GET: 'signed-in' } },
  '/api/people': { path: '/api/people', methods: { GET: ['admin'], POST: ['admin'] } },
  '/api/spacecraft': { path: '/api/spacecraft', methods: { GET: 'signed-in', POST: ['engineer', 'admin'] } },
  // Ingest authenticates by ingest token, so without one everybody gets 401.
  '/api/ingest': { path: '/api/ingest', methods: { POST: 'public' }, allowedStatus: 401 },
  '/api/uploads': { path: '/api/uploads', methods: { GET: 'signed-in' } },
  '/api/uploads/packets': { path: '/api/uploads/packets?spacecraft=MR-1', methods: { POST: ['operator', 'engineer', 'admin'] } },
  '/api/uploads/[id]/reingest': { path: '/api/uploads/999999/reingest', methods: { POST: ['operator', 'engineer', 'admin'] } },
  '/api/spacecraft/[key]/sheets': { path: '/api/spacecraft/MR-1/sheets', methods: { GET: 'signed-in', POST: ['engineer', 'admin'] } },
  '/api/spacecraft/[key]/tokens': { path: '/api/spacecraft/MR-1/tokens', methods: { GET: ['admin'], POST: ['admin'] } },
  '/api/spacecraft/[key]/tokens/[id]': { path: '/api/spacecraft/MR-1/tokens/999999', methods: { DELETE: ['admin'] } },
  '/trips': { path: '/trips', methods: { GET: 'signed-in' } },
  '/trips/[id]': { path: '/trips/999999', methods: { GET: 'signed-in' } },
  '/api/trips': { path: '/api/trips', methods: { GET: 'signed-in' } },
  '/api/trips/[id]': { path: '/api/trips/999999', methods: { GET: 'signed-in' } },
  '/api/trips/[id]/acknowledge': { path: '/api/trips/999999/acknowledge', methods: { POST: ['operator', 'analyst', 'engineer', 'admin'] } },
  '/api/trips/[id]/resolve': { path: '/api/trips/999999/resolve', methods: { POST: ['operator', 'analyst', 'engineer', 'admin'] } },
  '/trips/[id]/report': { path: '/trips/999999/report', methods: { GET: 'signed-in' } },
  '/api/trips/[id]/evidence': { path: '/api/trips/999999/evidence', methods: { GET: 'signed-in' } },
  '/api/trips/[id]/evidence.csv': { path: '/api/trips/999999/evidence.csv', methods: { GET: 'signed-in' } },
  '/api/trips/[id]/raw': { path: '/api/trips/999999/raw?window=2026-12-01T00:00:00Z', methods: { GET: 'signed-in' } },
  '/api/trips/[id]/notes': { path: '/api/trips/999999/notes', methods: { GET: 'signed-in', POST: ['analyst', 'engineer'] } },
  '/api/trips/[id]/attachments/[attachment]': { path: '/api/trips/999999/attachments/999999', methods: { GET: 'signed-in' } },
  '/api/trips/[id]/conclusion': { path: '/api/trips/999999/conclusion', methods: { PUT: ['operator', 'analyst', 'engineer', 'admin'] } },
  '/api/jobs': { path: '/api/jobs', methods: { GET: ['admin'] } },
  '/api/jobs/run': { path: '/api/jobs/run', methods: { POST: ['engineer', 'admin'] } },
  '/admin/jobs': { path: '/admin/jobs', methods: { GET: ['admin'] } },
  '/uploads': { path: '/uploads', methods: { GET: 'signed-in' } },
  '/spacecraft/[key]': { path: '/spacecraft/MR-1', methods: { GET: 'signed-in' } },
  '/spacecraft/[key]/sheets': { path: '/spacecraft/MR-1/sheets', methods: { GET: 'signed-in' } },
  '/admin/tokens': { path: '/admin/tokens', methods: { GET: ['admin'] } },
  '/api/spacecraft/[key]/link': { path: '/api/spacecraft/MR-1/link', methods: { GET: 'signed-in' } },
  '/mailbox': { path: '/mailbox', methods: { GET: ['admin'] } },
  '/api/mailbox': { path: '/api/mailbox', methods: { GET: ['admin'] } },
  '/api/mailbox/[id]': { path: '/api/mailbox/20261201T000000000Z-000000000000', methods: { GET: ['admin'] } },
  '/admin/outbox': { path: '/admin/outbox', methods: { GET: ['admin'] } },
  '/api/outbox': { path: '/api/outbox', methods: { GET: ['admin'] } },
  '/roster': { path: '/roster', methods: { GET: 'signed-in' } },
  '/roster/[key]': { path: '/roster/MR-1', methods: { GET: 'signed-in' } },
  '/api/roster/[key]': { path: '/api/roster/MR-1', methods: { GET: 'signed-in', POST: ['operator', 'admin'] } },
  '/api/roster/[key]/[id]': { path: '/api/roster/MR-1/999999', methods: { DELETE: ['operator', 'admin'] } },
  '/passes': { path: '/passes', methods: { GET: 'signed-in' } },
  '/stations': { path: '/stations', methods: { GET: 'signed-in' } },
  '/api/passes': { path: '/api/passes', methods: { GET: 'signed-in' } },
  '/api/stations': { path: '/api/stations', methods: { GET: 'signed-in', POST: ['engineer', 'admin'] } },
  '/api/stations/[key]': { path: '/api/stations/no-such-station', methods: { PATCH: ['engineer', 'admin'], DELETE: ['engineer', 'admin'] } },
  '/pass-watch': { path: '/pass-watch', methods: { GET: 'signed-in' } },
  '/pass-watch/[key]': { path: '/pass-watch/MR-1', methods: { GET: ['operator', 'analyst', 'engineer', 'admin'] } },
  // The live stream ends after its catch-up with once=1, so the check reads a finished answer.
  '/api/live/[key]': { path: '/api/live/MR-1?once=1', methods: { GET: ['operator', 'analyst', 'engineer', 'admin'] } },
  '/api/pass-log/[key]': { path: '/api/pass-log/MR-1', methods: { GET: 'signed-in', POST: ['operator', 'analyst', 'engineer', 'admin'] } },
  '/limits': { path: '/limits', methods: { GET: ['engineer', 'admin'] } },
  '/limits/[key]': { path: '/limits/MR-1', methods: { GET: ['engineer', 'admin'] } },
  '/api/limit-sets': { path: '/api/limit-sets?spacecraft=MR-1', methods: { GET: 'signed-in', POST: ['engineer', 'admin'] } },
  '/api/limit-sets/[id]': { path: '/api/limit-sets/999999', methods: { GET: 'signed-in', PUT: ['engineer', 'admin'] } },
  '/api/limit-sets/[id]/diff': { path: '/api/limit-sets/999999/diff', methods: { GET: 'signed-in' } },
  '/api/limit-sets/[id]/submit': { path: '/api/limit-sets/999999/submit', methods: { POST: ['engineer', 'admin'] } },
  '/api/limit-sets/[id]/approve': { path: '/api/limit-sets/999999/approve', methods: { POST: ['engineer', 'admin'] } },
  '/api/limit-sets/[id]/return': { path: '/api/limit-sets/999999/return', methods: { POST: ['engineer', 'admin'] } },
  '/api/limit-sets/[id]/backtests': { path: '/api/limit-sets/999999/backtests', methods: { GET: ['engineer', 'admin'], POST: ['engineer', 'admin'] } },
  '/api/backtests/[id]': { path: '/api/backtests/999999', methods: { GET: ['engineer', 'admin'] } },
  '/api/backtests/[id]/cancel': { path: '/api/backtests/999999/cancel', methods: { POST: ['engineer', 'admin'] } },
  '/admin/audit': { path: '/admin/audit', methods: { GET: ['admin'] } },
  '/api/people/[id]': { path: '/api/people/nosuchperson', methods: { PATCH: ['admin'] } },
  '/api/people/[id]/invitation': { path: '/api/people/nosuchperson/invitation', methods: { POST: ['admin'] } },
  '/api/audit': { path: '/api/audit', methods: { GET: ['admin'] } },
  '/account': { path: '/account', methods: { GET: 'signed-in' } },
  '/api/account/password': { path: '/api/account/password', methods: { POST: 'signed-in' } },
  '/forgot-password': { path: '/forgot-password', methods: { GET: 'public', POST: 'public' } },
  // An unknown token: everyone gets the page saying the link does not work (404).
  '/reset-password/[token]': { path: '/reset-password/not-a-real-token-0000000000', methods: { GET: 'public', POST: 'public' }, allowedStatus: 404 },
  '/invite/[token]': { path: '/invite/not-a-real-token-0000000000', methods: { GET: 'public', POST: 'public' }, allowedStatus: 404 },
  '/api/password-reset': { path: '/api/password-reset', methods: { POST: 'public' } },
  '/api/password-reset/confirm': { path: '/api/password-reset/confirm', methods: { POST: 'public' } },
  '/docs/api': { path: '/docs/api', methods: { GET: 'signed-in' } },
  '/api/openapi.json': { path: '/api/openapi.json', methods: { GET: 'signed-in' } },
};

const ROLES: TestRole[] = ['operator', 'analyst', 'engineer', 'admin'];

/** Route patterns and methods as the files in src/pages declare them. */
function discoverRoutes(): Map<string, Set<string>> {
  const root = path.resolve('src/pages');
  const out = new Map<string, Set<string>>();
  const walk = (dir: string) => {
    for (const f of fs.readdirSync(dir, { withFileTypes: true })) {
      const full = path.join(dir, f.name);
      if (f.isDirectory()) walk(full);
      else if (/\.(astro|ts)$/.test(f.name)) {
        let route = '/' + path.relative(root, full).replace(/\.(astro|ts)$/, '').replace(/(^|\/)index$/, '');
        route = route.replace(/\/$/, '') || '/';
        const text = fs.readFileSync(full, 'utf8');
        const methods = new Set<string>();
        if (f.name.endsWith('.astro')) {
          methods.add('GET');
          if (/Astro\.request\.method === 'POST'/.test(text)) methods.add('POST');
        } else {
          for (const m of text.matchAll(/export const (GET|POST|PUT|PATCH|DELETE)\b/g)) methods.add(m[1]!);
        }
        out.set(route, methods);
      }
    }
  };
  walk(root);
  return out;
}

describe('route × role matrix', () => {
  const clients: Partial<Record<TestRole | 'anonymous', Client>> = {};
  beforeAll(async () => {
    clients.anonymous = new Client();
    for (const r of ROLES) clients[r] = await clientAs(r);
  });

  it('has an entry for every route and method in src/pages, and no stale entries', () => {
    const found = discoverRoutes();
    const declared = new Map(Object.entries(MATRIX).map(([k, v]) => [k, new Set(Object.keys(v.methods))]));
    expect([...found.keys()].sort()).toEqual([...declared.keys()].sort());
    for (const [route, methods] of found) expect([...methods].sort(), route).toEqual([...declared.get(route)!].sort());
  });

  for (const [route, entry] of Object.entries(MATRIX)) {
    for (const [method, who] of Object.entries(entry.methods)) {
      it(`${method} ${route}`, async () => {
        const isApi = route.startsWith('/api/');
        for (const role of ['anonymous', ...ROLES] as const) {
          // Sign-out would end the shared session; check it on a fresh one.
          const c = route === '/api/auth/sign-out' && role !== 'anonymous' ? await clientAs(role) : clients[role]!;
          const res = await c.request(method, entry.path, method === 'GET' ? {} : { json: {} });
          const allowed = who === 'public' || (role !== 'anonymous' && (who === 'signed-in' || who.includes(role)));
          const label = `${method} ${entry.path} as ${role} → ${res.status}`;
          if (allowed && entry.allowedStatus) {
            expect(res.status, label).toBe(entry.allowedStatus);
          } else if (allowed) {
            expect([401, 403], label).not.toContain(res.status);
            expect(res.status, label).toBeLessThan(500);
          } else if (role === 'anonymous') {
            expect(res.status, label).toBe(isApi ? 401 : 302);
          } else {
            expect(res.status, label).toBe(403);
          }
        }
      });
    }
  }
});
