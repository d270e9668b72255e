import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { LimitSetInput } from '../../lib/limits/limit-set.schema';
import type { LimitSetSummary, LimitSetView, RuleDiff } from '../../lib/server/limit-review';
import type { BacktestView } from '../../lib/server/backtest';
import type { Handover } from '../../lib/server/trip-engine';
import type { BacktestInput } from './limit-bench.schema';

export type { LimitSetSummary, LimitSetView, RuleDiff, BacktestView };

export interface SetRef {
  id: number;
  version: number;
  name: string;
  status: LimitSetSummary['status'];
}

export interface DiffResponse {
  set: SetRef;
  previous: SetRef | null;
  diff: RuleDiff;
}

const setUrl = (id: number) => `/api/limit-sets/${id}`;

/** Every limit set of a spacecraft. */
export const limitSetsQuery = (key: string) =>
  queryOptions({
    queryKey: ['limit-sets', key],
    queryFn: () => http<{ spacecraft: string; sets: LimitSetSummary[] }>(`/api/limit-sets?spacecraft=${encodeURIComponent(key)}`),
  });

/** One limit set with its rules, review trail and kept backtests. */
export const limitSetQuery = (id: number) =>
  queryOptions({
    queryKey: ['limit-set', id],
    queryFn: () => http<{ set: LimitSetView }>(setUrl(id)),
  });

/** A set against the version before it. */
export const limitSetDiffQuery = (id: number) =>
  queryOptions({
    queryKey: ['limit-set', id, 'diff'],
    queryFn: () => http<DiffResponse>(`${setUrl(id)}/diff`),
  });

const pending = (b: BacktestView | undefined) => b?.status === 'queued' || b?.status === 'running';

/** One backtest; polled while it is queued or running, so that the progress bar moves. */
export const backtestQuery = (id: number) =>
  queryOptions({
    queryKey: ['backtest', id],
    queryFn: () => http<{ backtest: BacktestView }>(`/api/backtests/${id}`),
    refetchInterval: (q) => (pending(q.state.data?.backtest) ? 300 : false),
    staleTime: 0,
  });

export const createDraft = (spacecraft: string, copyOf?: number) => http<{ set: LimitSetView }>('/api/limit-sets', { method: 'POST', json: { spacecraft, copyOf } });
export const saveDraft = (id: number, input: LimitSetInput) => http<{ set: LimitSetView }>(setUrl(id), { method: 'PUT', json: input });
export const submitSet = (id: number, comment: string) => http<{ set: LimitSetView }>(`${setUrl(id)}/submit`, { method: 'POST', json: { comment } });
export const approveSet = (id: number, comment: string) => http<{ set: LimitSetView; handover: Handover | null }>(`${setUrl(id)}/approve`, { method: 'POST', json: { comment } });
export const returnSet = (id: number, comment: string) => http<{ set: LimitSetView }>(`${setUrl(id)}/return`, { method: 'POST', json: { comment } });
export const startBacktest = (id: number, span: BacktestInput) => http<{ backtest: BacktestView }>(`${setUrl(id)}/backtests`, { method: 'POST', json: span });
export const cancelBacktest = (id: number) => http<{ backtest: BacktestView }>(`/api/backtests/${id}/cancel`, { method: 'POST', json: {} });
