import { QueryClientProvider, useQuery } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { utcText } from '../../lib/format';
import { outboxQuery, type OutboxResponse, type OutboxState } from './mail.queries';

const STATE: Record<OutboxState, { colour: string; icon: string }> = {
  queued: { colour: '#5B7C99', icon: '◔' },
  sent: { colour: '#2F8F6B', icon: '●' },
  failed: { colour: '#C23B22', icon: '◆' },
};

function StateWord({ state }: { state: OutboxState }) {
  const s = STATE[state];
  return (
    <span className="inline-flex items-center gap-1 rounded-sm px-1.5 text-xs font-medium" style={{ color: s.colour, backgroundColor: `${s.colour}1a` }}>
      <span aria-hidden="true">{s.icon}</span>
      {state}
    </span>
  );
}

function OutboxTables({ initial }: { initial: OutboxResponse }) {
  const q = useQuery({ ...outboxQuery, initialData: initial });
  const { rows, counts, pendingDigest } = q.data;
  return (
    <div className="space-y-4">
      <p className="text-sm" aria-label="Outbox counts">
        <span className="num font-medium">{counts.queued}</span> queued · <span className="num font-medium">{counts.sent}</span> sent ·{' '}
        <span className={`num font-medium ${counts.failed ? 'text-warning' : ''}`}>{counts.failed}</span> failed ·{' '}
        <span className="num font-medium">{pendingDigest.length}</span> caution trip{pendingDigest.length === 1 ? '' : 's'} waiting for a digest
        <span className="ml-2 text-xs text-muted">{q.isFetching ? 'refreshing…' : 'refreshes every 5 s'}</span>
      </p>
      {q.isError && (
        <p role="alert" className="error-text">
          The outbox could not be refreshed: {q.error.message}. Reload the page to try again.
        </p>
      )}
      <section className="panel overflow-x-auto" aria-label="Messages">
        {rows.length === 0 ? (
          <p className="p-4 text-muted">No mail yet. Trips that open, escalate or clear queue messages here; the mail worker sends them to the relay.</p>
        ) : (
          <table className="table-compact">
            <thead>
              <tr>
                <th>Queued (UTC)</th>
                <th>Kind</th>
                <th>Subject</th>
                <th>To</th>
                <th>State</th>
                <th className="n">Attempts</th>
                <th>Next attempt / sent (UTC)</th>
                <th>Last error</th>
              </tr>
            </thead>
            <tbody>
              {rows.map((r) => (
                <tr key={r.id}>
                  <td className="num whitespace-nowrap">{utcText(r.created_at)}</td>
                  <td className="whitespace-nowrap text-xs">{r.kind}</td>
                  <td className="max-w-[28rem] truncate" title={r.message_key}>
                    {r.trip_id !== null ? <a href={`/trips/${r.trip_id}`}>{r.subject}</a> : r.subject}
                  </td>
                  <td className="max-w-[14rem] truncate text-xs" title={r.to_addresses.join(', ')}>
                    {r.to_addresses.join(', ') || '—'}
                  </td>
                  <td>
                    <StateWord state={r.state} />
                  </td>
                  <td className="n">{r.attempts}</td>
                  <td className="num whitespace-nowrap">{r.state === 'sent' ? utcText(r.sent_at) : r.state === 'queued' ? utcText(r.next_attempt_at) : '—'}</td>
                  <td className="max-w-[20rem] truncate text-xs text-warning" title={r.last_error ?? ''}>
                    {r.last_error ?? ''}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        )}
      </section>
      {pendingDigest.length > 0 && (
        <section className="panel overflow-x-auto" aria-label="Waiting for a digest">
          <h2 className="px-4 pt-3">Caution trips waiting for their digest</h2>
          <table className="table-compact">
            <thead>
              <tr>
                <th>Spacecraft</th>
                <th>Trip</th>
                <th>Period from (UTC)</th>
                <th>To</th>
                <th>Cleared (UTC)</th>
              </tr>
            </thead>
            <tbody>
              {pendingDigest.map((d) => (
                <tr key={d.id}>
                  <td>{d.spacecraft_key}</td>
                  <td>
                    <a href={`/trips/${d.trip_id}`}>Trip {d.trip_id}</a>
                  </td>
                  <td className="num">{utcText(d.period_start)}</td>
                  <td className="text-xs">{d.to_addresses.join(', ') || '—'}</td>
                  <td className="num">{d.cleared_at ? utcText(d.cleared_at) : '—'}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </section>
      )}
    </div>
  );
}

/** Outbox: every message Millrace has queued, with its delivery state. */
export default function Outbox({ initial }: { initial: OutboxResponse }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <OutboxTables initial={initial} />
    </QueryClientProvider>
  );
}
