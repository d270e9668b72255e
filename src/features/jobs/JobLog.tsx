import { QueryClientProvider, useMutation, useQuery, useQueryClient, queryOptions } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { http } from '../../lib/http';
import { formatUtc } from '../../lib/format';

interface Run {
  id: number;
  job: string;
  spacecraft: string | null;
  started_at: string;
  finished_at: string | null;
  windows: number;
  rows_written: number;
  detail: {
    status?: string;
    batches?: number;
    trips?: { opened: number; escalated: number; cleared: number };
    /** pass refresh */
    recomputed?: unknown[];
    /** mail round */
    digests?: number;
    sent?: number;
    retried?: number;
    failed?: number;
  };
  error: string | null;
}

/** What POST /api/jobs/run answers: each part of the run. */
interface RunSummary {
  passes: { status: string; recomputed: unknown[]; error?: string };
  jobs: { spacecraftKey: string; status: string; windows: number; error?: string }[];
  mail?: { status: string; digests: number; sent: number; retried: number; failed: number; error?: string };
  analysisError?: string;
}

function summaryText(s: RunSummary): string {
  const parts = [`Passes ${s.passes.status} (${s.passes.recomputed.length} recomputed)`];
  if (s.analysisError) parts.push(`analysis failed: ${s.analysisError}`);
  parts.push(...s.jobs.map((j) => `${j.spacecraftKey} ${j.status} (${j.windows} windows)`));
  if (s.mail) parts.push(`mail ${s.mail.status}: ${s.mail.digests} digests, ${s.mail.sent} sent, ${s.mail.retried} to retry, ${s.mail.failed} failed`);
  return parts.join(' · ');
}

/** What a run did, by job: trips for analysis, messages for mail, recomputed spacecraft for passes. */
function workText(r: Run): string {
  if (r.detail.trips) return `trips +${r.detail.trips.opened} ↑${r.detail.trips.escalated} ✓${r.detail.trips.cleared}`;
  if (r.detail.sent !== undefined) return `${r.detail.digests ?? 0} digests, ${r.detail.sent} sent, ${r.detail.retried ?? 0} retry, ${r.detail.failed ?? 0} failed`;
  if (r.detail.recomputed) return `${r.detail.recomputed.length} recomputed`;
  return '—';
}

export const jobRunsQuery = queryOptions({ queryKey: ['job-runs'], queryFn: () => http<{ runs: Run[] }>('/api/jobs'), refetchInterval: 10_000 });

function Log({ initial }: { initial: { runs: Run[] } }) {
  const qc = useQueryClient();
  const q = useQuery({ ...jobRunsQuery, initialData: initial });
  const run = useMutation({
    mutationFn: () => http<RunSummary>('/api/jobs/run', { method: 'POST', json: {} }),
    onSuccess: () => qc.invalidateQueries({ queryKey: ['job-runs'] }),
  });
  return (
    <div className="space-y-3">
      <div className="flex items-center gap-3">
        <button className="btn btn-primary" disabled={run.isPending} onClick={() => run.mutate()}>
          {run.isPending ? 'Running…' : 'Run due work now'}
        </button>
        {run.isSuccess && <span className="text-xs text-muted">Done: {summaryText(run.data)}</span>}
        {run.isError && <span role="alert" className="text-xs text-warning">{run.error.message}</span>}
      </div>
      <div className="panel overflow-x-auto">
        <table className="table-compact">
          <thead>
            <tr>
              <th>Run</th>
              <th>Job</th>
              <th>Spacecraft</th>
              <th>Started (UTC)</th>
              <th className="n">Took</th>
              <th className="n">Batches</th>
              <th className="n">Windows</th>
              <th className="n">Rows</th>
              <th>Work</th>
              <th>Outcome</th>
            </tr>
          </thead>
          <tbody>
            {q.data.runs.map((r) => (
              <tr key={r.id}>
                <td className="num">{r.id}</td>
                <td>{r.job}</td>
                <td>{r.spacecraft ?? '—'}</td>
                <td className="num">{formatUtc(r.started_at)}</td>
                <td className="n">{r.finished_at ? `${((new Date(r.finished_at).getTime() - new Date(r.started_at).getTime()) / 1000).toFixed(2)} s` : 'running'}</td>
                <td className="n">{r.detail.batches ?? '—'}</td>
                <td className="n">{r.windows}</td>
                <td className="n">{r.rows_written}</td>
                <td className="num text-xs">{workText(r)}</td>
                <td className={r.error ? 'text-warning' : ''}>{r.error ? `failed: ${r.error}` : (r.detail.status ?? '—')}</td>
              </tr>
            ))}
          </tbody>
        </table>
        {q.data.runs.length === 0 && <p className="p-4 text-muted">No job has run yet. The scheduler refreshes passes and runs the analysis every minute; press “Run due work now” to run it, with a mail round, at once.</p>}
      </div>
    </div>
  );
}

/** The admins' Job log island. */
export default function JobLog({ initial }: { initial: { runs: Run[] } }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Log initial={initial} />
    </QueryClientProvider>
  );
}
