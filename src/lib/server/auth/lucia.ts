import { Lucia, TimeSpan } from 'lucia';
import { NodePostgresAdapter } from '@lucia-auth/adapter-postgresql';
import { pool } from '../db';
import { config } from '../config';

/** Sessions live in PostgreSQL (user_session); the cookie holds only the opaque session id. */
export const lucia = new Lucia(new NodePostgresAdapter(pool, { user: 'app_user', session: 'user_session' }), {
  sessionExpiresIn: new TimeSpan(Math.round(config().SESSION_DAYS * 24 * 60), 'm'),
  sessionCookie: {
    name: 'millrace_session',
    attributes: { secure: config().cookieSecure, sameSite: 'lax' },
  },
  getUserAttributes: (attributes) => ({
    email: attributes.email,
    name: attributes.name,
    disabledAt: attributes.disabled_at,
  }),
});

declare module 'lucia' {
  interface Register {
    Lucia: typeof lucia;
    DatabaseUserAttributes: { email: string; name: string; disabled_at: Date | null };
  }
}
