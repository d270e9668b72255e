import type { APIRoute } from 'astro';
import { db } from '../../../../lib/server/db';
import { handle, HttpError, json, parseBody } from '../../../../lib/server/http';
import { requireRole } from '../../../../lib/server/auth/require';
import { idParam } from '../../../../lib/server/params';
import { findBacktest, insertBacktest, listBacktests, recoverInterruptedBacktests, scheduleBacktest } from '../../../../lib/server/backtest';
import { backtestInputSchema } from '../../../../features/limit-bench/limit-bench.schema';

export const GET: APIRoute = handle(async ({ locals, params }) => {
  requireRole(locals, 'engineer', 'admin');
  const id = idParam('id', params.id);
  await recoverInterruptedBacktests(db);
  const set = await db.selectFrom('limit_set').select('id').where('id', '=', id).executeTakeFirst();
  if (!set) throw new HttpError('NOT_FOUND', `There is no limit set ${id}.`);
  return json({ backtests: await listBacktests(db, id) });
});

/** Queue a backtest; it runs in this process after the answer (202), which the island then polls. */
export const POST: APIRoute = handle(async ({ locals, params, request }) => {
  const user = requireRole(locals, 'engineer', 'admin');
  const id = idParam('id', params.id);
  const input = await parseBody(backtestInputSchema, request);
  await recoverInterruptedBacktests(db);
  const created = await insertBacktest(db, id, { fromMs: input.from ? Date.parse(input.from) : undefined, toMs: input.to ? Date.parse(input.to) : undefined }, user.id);
  scheduleBacktest(db, created.id);
  return json({ backtest: await findBacktest(db, created.id) }, 202);
});
