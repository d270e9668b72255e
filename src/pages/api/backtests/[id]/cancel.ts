import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { cancelBacktest } from '../../../../lib/server/backtest';

export const POST: APIRoute = handle(async ({ locals, params }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  return json({ backtest: await cancelBacktest(db, idParam('id', params.id), user.id) });
});
