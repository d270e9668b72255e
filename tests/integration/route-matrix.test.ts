import fs from 'node:fs';
import os from 'node:os';
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

const METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE'] as const;
const METHOD_NAME = '(GET|POST|PUT|PATCH|DELETE|ALL)';
/** Files Astro routes: pages (answer GET; a page may branch on the method) and endpoints. */
const PAGE_FILE = /\.(astro|md|mdx|html)$/;
const ENDPOINT_FILE = /\.(ts|js|mjs|mts)$/;

export interface Discovered {
  routes: Map<string, Set<string>>;
  /** Route files whose methods could not be read: each fails the matrix test. */
  problems: string[];
}

/** The methods an endpoint module exports, in any of the forms Astro accepts. */
function endpointMethods(text: string): { methods: Set<string>; problem: string | null } {
  const methods = new Set<string>();
  const add = (m: string) => {
    // ALL answers every method, so the matrix must say who may use each of them.
    if (m === 'ALL') for (const x of METHODS) methods.add(x);
    else methods.add(m);
  };
  // export const GET = …, export let GET, export function GET(…), export async function GET(…)
  for (const m of text.matchAll(new RegExp(`export\\s+(?:(?:const|let|var)\\s+|(?:async\\s+)?function\\s*\\*?\\s*)${METHOD_NAME}\\b`, 'g'))) add(m[1]!);
  // export { handler as GET, POST }, export { GET } from './x'
  for (const list of text.matchAll(/export\s*(?:type\s*)?\{([^}]*)\}/g)) {
    for (const part of list[1]!.split(',')) {
      const name = part.trim().split(/\s+as\s+/).pop()?.trim();
      if (name && new RegExp(`^${METHOD_NAME}$`).test(name)) add(name);
    }
  }
  if (/export\s*\*/.test(text)) return { methods, problem: 're-exports with `export *`, so its methods cannot be read' };
  if (methods.size === 0) return { methods, problem: 'exports no GET/POST/PUT/PATCH/DELETE/ALL handler that this test can find' };
  return { methods, problem: null };
}

/** The methods a page answers: GET, and each method it compares `Astro.request.method` with. */
function pageMethods(text: string): { methods: Set<string>; problem: string | null } {
  const methods = new Set<string>(['GET']);
  const uses = [...text.matchAll(/Astro\.request\.method/g)].length;
  const compared = [
    ...text.matchAll(/Astro\.request\.method\s*[!=]==?\s*['"`]([A-Z]+)['"`]/g),
    ...text.matchAll(/['"`]([A-Z]+)['"`]\s*[!=]==?\s*Astro\.request\.method/g),
  ];
  for (const m of compared) methods.add(m[1]!);
  const unknown = [...methods].filter((m) => !(METHODS as readonly string[]).includes(m));
  if (unknown.length) return { methods, problem: `compares the method with ${unknown.join(', ')}` };
  if (compared.length !== uses) return { methods, problem: 'reads Astro.request.method other than in a plain comparison with a method name' };
  return { methods, problem: null };
}

/** Route patterns and methods as the files under `root` (src/pages) declare them. */
export function discoverRoutes(root = path.resolve('src/pages')): Discovered {
  const routes = new Map<string, Set<string>>();
  const problems: string[] = [];
  const walk = (dir: string) => {
    for (const f of fs.readdirSync(dir, { withFileTypes: true })) {
      // Astro does not route files or folders whose name starts with an underscore.
      if (f.name.startsWith('_')) continue;
      const full = path.join(dir, f.name);
      const rel = path.relative(root, full);
      if (f.isDirectory()) {
        walk(full);
        continue;
      }
      const isPage = PAGE_FILE.test(f.name);
      if (!isPage && !ENDPOINT_FILE.test(f.name)) continue;
      if (/\.d\.m?ts$/.test(f.name)) continue;
      let route = '/' + rel.replace(isPage ? PAGE_FILE : ENDPOINT_FILE, '').replace(/(^|\/)index$/, '');
      route = route.replace(/\/$/, '') || '/';
      const text = fs.readFileSync(full, 'utf8');
      const { methods, problem } = isPage ? pageMethods(text) : endpointMethods(text);
      if (problem) problems.push(`${rel}: ${problem}`);
      if (routes.has(route)) problems.push(`${rel}: a second file for route ${route}`);
      routes.set(route, new Set([...(routes.get(route) ?? []), ...methods]));
    }
  };
  walk(root);
  return { routes, problems };
}

describe('route discovery', () => {
  it('finds every form of route file Astro serves, and flags what it cannot read', () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'millrace-pages-'));
    const put = (rel: string, text: string) => {
      fs.mkdirSync(path.dirname(path.join(dir, rel)), { recursive: true });
      fs.writeFileSync(path.join(dir, rel), text);
    };
    try {
      put('api/a.ts', 'export const GET: APIRoute = () => new Response();\nexport const POST = handle(async () => json({}));');
      put('api/b.ts', 'export async function GET() { return new Response(); }\nexport function DELETE() {}');
      put('api/c.js', 'export const ALL = () => new Response();');
      put('api/d/[id].mjs', 'const h = () => new Response();\nexport { h as PATCH, h as PUT };');
      put('api/e.json.ts', 'export let GET = () => new Response();');
      put('api/_helpers.ts', 'export const GET = 1;');
      put('_drafts/x.astro', '---\n---');
      put('api/helper.ts', 'export const util = 1;');
      put('api/star.ts', "export * from './a';");
      put('index.astro', '---\n---\n<p>home</p>');
      put('form.astro', "---\nif (Astro.request.method === 'POST') {}\n---");
      put('odd.astro', "---\nconst m = Astro.request.method;\n---");
      put('notes/about.md', '# About');
      const { routes, problems } = discoverRoutes(dir);
      const got = Object.fromEntries([...routes].map(([r, m]) => [r, [...m].sort()]));
      expect(got).toEqual({
        '/api/a': ['GET', 'POST'],
        '/api/b': ['DELETE', 'GET'],
        '/api/c': [...METHODS].sort(),
        '/api/d/[id]': ['PATCH', 'PUT'],
        '/api/e.json': ['GET'],
        '/api/helper': [],
        '/api/star': [],
        '/': ['GET'],
        '/form': ['GET', 'POST'],
        '/odd': ['GET'],
        '/notes/about': ['GET'],
      });
      expect(problems.map((p) => p.split(':')[0]).sort()).toEqual(['api/helper.ts', 'api/star.ts', 'odd.astro']);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('route × role matrix', () => {
  const clients: Partial<Record<TestRole | 'anonymous', Client>> = {};
  beforeAll(async () => {
    clients.anonymous = new Client();
    for (const r of ROLES) clients[r] = await clientAs(r);
  });

  it('has an entry for every route and method in src/pages, and no stale entries', () => {
    const { routes: found, problems } = discoverRoutes();
    expect(problems, 'route files whose methods this test cannot read').toEqual([]);
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
