import { defineMiddleware, sequence } from 'astro:middleware';
import { lucia } from './lib/server/auth/lucia';
import { db } from './lib/server/db';
import { findRolesByUserId } from './lib/server/users';
import { accessFor } from './lib/server/auth/access';
import { allows } from './lib/server/auth/roles';
import { json } from './lib/server/http';

/** Fill locals.user and locals.session from the session cookie. */
const auth = defineMiddleware(async (ctx, next) => {
  ctx.locals.user = null;
  ctx.locals.session = null;
  const sessionId = ctx.cookies.get(lucia.sessionCookieName)?.value ?? null;
  if (sessionId) {
    const { session, user } = await lucia.validateSession(sessionId);
    if (session && user && !user.disabledAt) {
      if (session.fresh) {
        const c = lucia.createSessionCookie(session.id);
        ctx.cookies.set(c.name, c.value, c.attributes);
      }
      ctx.locals.session = session;
      ctx.locals.user = { id: user.id, email: user.email, name: user.name, roles: await findRolesByUserId(db, user.id) };
    } else {
      if (session) await lucia.invalidateSession(session.id);
      const c = lucia.createBlankSessionCookie();
      ctx.cookies.set(c.name, c.value, c.attributes);
    }
  }
  return next();
});

/** Deny by default; allow by the route's rule. */
const guard = defineMiddleware(async (ctx, next) => {
  const pattern = ctx.routePattern;
  // Astro's own error pages carry no rule of ours.
  if (pattern === '/404' || pattern === '/500' || pattern.startsWith('/_')) return next();
  const isApi = ctx.url.pathname.startsWith('/api/');
  const access = accessFor(pattern, ctx.request.method);
  const user = ctx.locals.user;
  if (access && allows(access, user)) return next();
  if (access && access !== 'public' && !user) {
    if (isApi) return json({ error: { code: 'UNAUTHORIZED', message: 'Sign in first.' } }, 401);
    return ctx.redirect(`/sign-in?next=${encodeURIComponent(ctx.url.pathname + ctx.url.search)}`, 302);
  }
  if (isApi) {
    if (!user) return json({ error: { code: 'UNAUTHORIZED', message: 'Sign in first.' } }, 401);
    return json({ error: { code: 'FORBIDDEN', message: access ? 'Your roles do not allow this.' : `${ctx.request.method} is not allowed here.` } }, 403);
  }
  if (!user) return ctx.redirect(`/sign-in?next=${encodeURIComponent(ctx.url.pathname)}`, 302);
  return ctx.rewrite('/forbidden');
});

export const onRequest = sequence(auth, guard);
