import { useState } from 'react';
import { QueryClientProvider, useQuery } from '@tanstack/react-query';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import type { z } from 'zod';
import { getQueryClient } from '../../lib/query-client';
import { utcText } from '../../lib/format';
import { auditQuery, auditSearch, type AuditEntryRow, type AuditFilters, type AuditPage } from './audit.queries';
import { auditQuerySchema, type AuditQuery } from './audit.schema';

type FilterForm = z.input<typeof auditQuerySchema>;

function scalar(v: unknown): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'string') return v;
  if (typeof v === 'number' || typeof v === 'boolean') return String(v);
  if (Array.isArray(v)) return v.length ? `[${v.map(scalar).join(', ')}]` : '[]';
  return JSON.stringify(v);
}

/** The detail of an entry as "key: value" parts; before/after pairs read "before → after". */
export function detailParts(detail: unknown): string[] {
  if (detail === null || typeof detail !== 'object' || Array.isArray(detail)) return detail === undefined ? [] : [scalar(detail)];
  const d = detail as Record<string, unknown>;
  const parts: string[] = [];
  if ('before' in d && 'after' in d) parts.push(`${scalar(d.before)} → ${scalar(d.after)}`);
  for (const [k, v] of Object.entries(d)) {
    if (k === 'before' || k === 'after') continue;
    if (Array.isArray(v) && v.length === 0) continue;
    parts.push(`${k}: ${scalar(v)}`);
  }
  return parts;
}

function targetHref(e: AuditEntryRow): string | null {
  if (e.target_type === 'trip') return `/trips/${encodeURIComponent(e.target_id)}`;
  if (e.target_type === 'spacecraft') return `/spacecraft/${encodeURIComponent(e.target_id)}`;
  if (e.target_type === 'user') return '/admin/people';
  if (e.target_type === 'ground_station') return '/stations';
  return null;
}

function Entry({ e }: { e: AuditEntryRow }) {
  const parts = detailParts(e.detail);
  const text = parts.join(' · ');
  const href = targetHref(e);
  const target = e.target_name ? `${e.target_name}` : e.target_id;
  return (
    <tr className="align-top">
      <td className="num whitespace-nowrap">{utcText(e.at)}</td>
      <td className="whitespace-nowrap">
        {e.actor_id === null ? <span className="text-muted">system</span> : (e.actor_name ?? e.actor_id)}
      </td>
      <td className="whitespace-nowrap font-mono text-xs">{e.action}</td>
      <td className="whitespace-nowrap">
        <span className="text-xs text-muted">{e.target_type} </span>
        {href ? <a href={href}>{target}</a> : <span>{target}</span>}
      </td>
      <td className="max-w-xl py-1 text-xs">
        {text.length <= 140 ? (
          <span className="break-words">{text || '—'}</span>
        ) : (
          <details>
            <summary className="cursor-pointer break-words">{text.slice(0, 140)}…</summary>
            <pre className="mt-1 max-h-64 overflow-auto whitespace-pre-wrap rounded bg-paper px-2 py-1 font-mono">{JSON.stringify(e.detail, null, 2)}</pre>
          </details>
        )}
      </td>
    </tr>
  );
}

function toFilters(q: AuditQuery): AuditFilters {
  return { actor: q.actor, action: q.action, targetType: q.targetType, from: q.from, to: q.to, page: q.page };
}

function AuditPanels({ initial, initialFilters }: { initial: AuditPage; initialFilters: AuditFilters }) {
  const [filters, setFilters] = useState<AuditFilters>(initialFilters);
  const q = useQuery({ ...auditQuery(filters), initialData: filters === initialFilters ? initial : undefined });
  const data = q.data ?? initial;
  const form = useForm<FilterForm, unknown, AuditQuery>({
    resolver: zodResolver(auditQuerySchema),
    defaultValues: { actor: initialFilters.actor ?? '', action: initialFilters.action ?? '', targetType: initialFilters.targetType ?? '', from: initialFilters.from ?? '', to: initialFilters.to ?? '' },
  });
  const go = (f: AuditFilters) => {
    setFilters(f);
    window.history.replaceState(null, '', `${window.location.pathname}${auditSearch(f)}`);
  };
  const errors = form.formState.errors;
  const pages = Math.max(1, Math.ceil(data.total / data.pageSize));
  const page = filters.page ?? 1;
  const first = data.total === 0 ? 0 : (data.page - 1) * data.pageSize + 1;
  const last = Math.min(data.total, data.page * data.pageSize);
  return (
    <div className="space-y-4">
      <form
        className="panel flex flex-wrap items-end gap-3 p-3"
        aria-label="Filter the audit log"
        noValidate
        onSubmit={form.handleSubmit((v) => go({ ...toFilters(v), page: 1 }))}
      >
        <div>
          <label className="label" htmlFor="f-actor">
            Who
          </label>
          <select id="f-actor" className="field w-52" {...form.register('actor')}>
            <option value="">anyone</option>
            {data.facets.actors.map((a) => (
              <option key={a.id ?? 'system'} value={a.id ?? 'system'}>
                {a.name}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label className="label" htmlFor="f-action">
            Action
          </label>
          <select id="f-action" className="field w-48" {...form.register('action')}>
            <option value="">any action</option>
            {data.facets.actions.map((a) => (
              <option key={a} value={a}>
                {a}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label className="label" htmlFor="f-target">
            Target type
          </label>
          <select id="f-target" className="field w-40" {...form.register('targetType')}>
            <option value="">any target</option>
            {data.facets.targetTypes.map((t) => (
              <option key={t} value={t}>
                {t}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label className="label" htmlFor="f-from">
            From (UTC)
          </label>
          <input id="f-from" className="field num w-44" placeholder="2026-12-01 08:00" aria-invalid={errors.from ? 'true' : undefined} {...form.register('from')} />
          {errors.from && <p className="error-text mt-1 w-44">{errors.from.message}</p>}
        </div>
        <div>
          <label className="label" htmlFor="f-to">
            To (UTC)
          </label>
          <input id="f-to" className="field num w-44" placeholder="2026-12-02 08:00" aria-invalid={errors.to ? 'true' : undefined} {...form.register('to')} />
          {errors.to && <p className="error-text mt-1 w-44">{errors.to.message}</p>}
        </div>
        <button type="submit" className="btn btn-primary">
          Show
        </button>
        <button
          type="button"
          className="btn"
          onClick={() => {
            form.reset({ actor: '', action: '', targetType: '', from: '', to: '' });
            go({ page: 1 });
          }}
        >
          Clear
        </button>
      </form>
      {q.isError && (
        <p role="alert" className="panel border-warning/40 px-4 py-3 text-warning">
          The audit log could not be read: {q.error.message}. Check the filters and try again.
        </p>
      )}
      <section className="panel" aria-labelledby="audit-h">
        <header className="flex flex-wrap items-baseline justify-between gap-2 border-b border-rule px-4 py-3">
          <h2 id="audit-h">Entries</h2>
          <span className="num text-xs text-muted" aria-live="polite">
            {data.total === 0 ? 'none' : `${first}–${last} of ${data.total}`}
            {q.isFetching ? ' · loading…' : ''}
          </span>
        </header>
        {data.entries.length === 0 ? (
          <p className="px-4 py-4 text-muted">
            Nothing on record under these filters. Widen the time window or clear a filter; changes to limit sets, sheets, roles, tokens and trips land here as they
            happen.
          </p>
        ) : (
          <div className="overflow-x-auto">
            <table className="table-compact" aria-label="Audit log">
              <thead>
                <tr>
                  <th>When (UTC)</th>
                  <th>Who</th>
                  <th>Action</th>
                  <th>Target</th>
                  <th>What changed</th>
                </tr>
              </thead>
              <tbody>
                {data.entries.map((e) => (
                  <Entry key={e.id} e={e} />
                ))}
              </tbody>
            </table>
          </div>
        )}
        {pages > 1 && (
          <nav aria-label="Pages" className="flex items-center justify-end gap-2 px-4 py-2 text-xs">
            <button type="button" className="btn h-7 px-2 text-xs" disabled={page <= 1} onClick={() => go({ ...filters, page: page - 1 })}>
              Newer
            </button>
            <span className="num">
              page {page} of {pages}
            </span>
            <button type="button" className="btn h-7 px-2 text-xs" disabled={page >= pages} onClick={() => go({ ...filters, page: page + 1 })}>
              Older
            </button>
          </nav>
        )}
      </section>
    </div>
  );
}

/** The admin's audit log: who changed what and when, filterable by who, action, target type and time. */
export default function Audit(props: { initial: AuditPage; initialFilters: AuditFilters }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <AuditPanels {...props} />
    </QueryClientProvider>
  );
}
