import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, HttpError, json } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { findBacktest, recoverInterruptedBacktests } from '../../../../lib/server/backtest';

export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals, 'engineer', 'admin');
  const id = idParam('id', params.id);
  await recoverInterruptedBacktests(db);
  const b = await findBacktest(db, id);
  if (!b) throw new HttpError('NOT_FOUND', `There is no backtest ${id}.`);
  return json({ backtest: b });
});
