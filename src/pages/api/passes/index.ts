import type { APIRoute } from 'astro';
import { db } from '../../../lib/server/db';
import { handle, json, parseWith } from '../../../lib/server/http';
import { requireRole } from '../../../lib/server/auth/require';
import { listPasses, passHorizon, refreshPassesIfStale } from '../../../lib/server/passes';
import { passQuerySchema, passWindow } from '../../../features/passes/passes.schema';

/** Predicted passes overlapping a window (default: the last day and the next three), with what arrived in those begun. */
export const GET: APIRoute = handle(async ({ locals, url }) => {
  requireRole(locals);
  const q = parseWith(passQuerySchema, Object.fromEntries(url.searchParams), 'query');
  const now = new Date();
  await refreshPassesIfStale(db, now);
  const { from, to } = passWindow(q, now);
  const [passes, horizon] = await Promise.all([listPasses(db, { spacecraft: q.spacecraft, station: q.station, from, to }, now), passHorizon(db)]);
  return json({ now: now.toISOString(), from: from.toISOString(), to: to.toISOString(), ...horizon, passes });
});
