import { db } from '../../src/lib/server/db';

export { db };

/** The built app under test, started by the test launcher. */
export const BASE_URL = process.env.TEST_BASE_URL ?? 'http://127.0.0.1:4399';
export const DEMO_PASSWORD = process.env.DEMO_PASSWORD ?? 'millrace-demo';

export const ROLE_EMAIL = {
  operator: 'operator@millrace.test',
  analyst: 'analyst@millrace.test',
  engineer: 'engineer@millrace.test',
  admin: 'admin@millrace.test',
} as const;
export type TestRole = keyof typeof ROLE_EMAIL;

/** A tiny cookie-keeping client for the app's HTTP API. */
export class Client {
  cookie = '';
  async request(method: string, path: string, init: { json?: unknown; body?: BodyInit; headers?: Record<string, string> } = {}): Promise<Response> {
    const headers: Record<string, string> = { origin: BASE_URL, ...init.headers };
    if (this.cookie) headers.cookie = this.cookie;
    if (init.json !== undefined) headers['content-type'] = 'application/json';
    const res = await fetch(BASE_URL + path, {
      method,
      headers,
      body: init.json !== undefined ? JSON.stringify(init.json) : init.body,
      redirect: 'manual',
    });
    const set = res.headers.getSetCookie();
    for (const c of set) {
      const [pair] = c.split(';');
      if (pair?.startsWith('millrace_session=')) this.cookie = pair.endsWith('=') ? '' : pair;
    }
    return res;
  }
  get(path: string) {
    return this.request('GET', path);
  }
  post(path: string, json?: unknown) {
    return this.request('POST', path, { json: json ?? {} });
  }
  async signIn(email: string, password = DEMO_PASSWORD): Promise<Response> {
    return this.post('/api/auth/sign-in', { email, password });
  }
}

/** A client signed in as one of the demo roles. */
export async function clientAs(role: TestRole): Promise<Client> {
  const c = new Client();
  const res = await c.signIn(ROLE_EMAIL[role]);
  if (res.status !== 200) throw new Error(`sign-in as ${role}: ${res.status} ${await res.text()}`);
  return c;
}
