import type { ReactNode } from 'react';
import { QueryClientProvider, useQuery } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { linkQuery, type LinkBatch, type LinkView } from './link.queries';
import { APID_NAMES, countText, utcClock, utcText } from '../../lib/format';
import { Size } from './Qty';

interface Props {
  spacecraft: string;
  initial: LinkView;
  /** When the server read `initial` (ISO), so the first paint and hydration agree. */
  generatedAt: string;
}

function hexGroups(hex: string): string {
  return hex.replace(/(..)/g, '$1 ').trim();
}

function mode(b: LinkBatch): string {
  if (b.realtime > 0 && b.playback > 0) return 'mixed';
  if (b.realtime > 0) return 'real time';
  if (b.playback > 0) return 'playback';
  return '—';
}

function Empty({ children }: { children: ReactNode }) {
  return <p className="px-4 py-4 text-muted">{children}</p>;
}

function Batches({ batches }: { batches: LinkBatch[] }) {
  if (batches.length === 0)
    return (
      <Empty>
        No telemetry received yet — a ground station posts packets with an ingest token (an admin creates one under{' '}
        <a href="/admin/tokens">Tokens</a>), or upload a recorded pass file on <a href="/uploads">Uploads</a>.
      </Empty>
    );
  return (
    <div className="overflow-x-auto">
      <table className="table-compact">
        <thead>
          <tr>
            <th>Received (UTC)</th>
            <th>Station</th>
            <th>Source</th>
            <th className="n">Accepted</th>
            <th className="n">Duplicates</th>
            <th className="n">Rejected</th>
            <th>Mode</th>
            <th className="n">Real time</th>
            <th className="n">Playback</th>
            <th className="n">Size</th>
            <th>Packet times (UTC)</th>
          </tr>
        </thead>
        <tbody>
          {batches.map((b) => (
            <tr key={b.id}>
              <td className="num whitespace-nowrap">{utcText(b.receivedAt)}</td>
              <td title={b.station ?? undefined}>{b.stationName ?? <span className="text-muted">none given</span>}</td>
              <td className="whitespace-nowrap">{b.source === 'upload' ? `upload #${b.uploadId ?? '?'}` : 'ingest post'}</td>
              <td className="n">{countText(b.accepted)}</td>
              <td className="n">{countText(b.duplicates)}</td>
              <td className={`n ${b.rejected > 0 ? 'font-medium text-warning' : ''}`}>{countText(b.rejected)}</td>
              <td className="whitespace-nowrap text-muted">{mode(b)}</td>
              <td className="n">{countText(b.realtime)}</td>
              <td className="n">{countText(b.playback)}</td>
              <td className="n whitespace-nowrap">
                <Size bytes={b.bytes} />
              </td>
              <td className="num whitespace-nowrap text-muted">
                {b.firstAt ? `${utcText(b.firstAt)} – ${utcClock(b.lastAt)}` : '—'}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

function LinkPanels({ spacecraft, initial, generatedAt }: Props) {
  const q = useQuery({ ...linkQuery(spacecraft), initialData: initial, initialDataUpdatedAt: Date.parse(generatedAt) });
  const data = q.data;
  return (
    <div className="space-y-5">
      <div className="flex flex-wrap items-center gap-x-6 gap-y-1 text-xs text-muted" aria-live="polite">
        <span>
          Open gaps <strong className="num text-ink">{countText(data.openGapCount)}</strong>
        </span>
        <span>
          Quarantined packets <strong className="num text-ink">{countText(data.quarantinedCount)}</strong>
        </span>
        <span>
          Last batch <strong className="num text-ink">{data.batches[0] ? `${utcText(data.batches[0].receivedAt)} UTC` : '—'}</strong>
        </span>
        <span className="ml-auto num">
          {q.isFetching ? 'Refreshing…' : `Read ${utcClock(new Date(q.dataUpdatedAt).toISOString())} UTC · refreshes every 10 s`}
        </span>
      </div>
      {q.isError && (
        <div role="alert" className="panel border-warning/40 px-4 py-3 text-warning">
          The refresh failed ({q.error.message}); the tables show the data read at {utcClock(new Date(q.dataUpdatedAt).toISOString())} UTC.
          It is tried again every 10 s.{' '}
          <button type="button" className="btn ml-2" onClick={() => q.refetch()}>
            Try now
          </button>
        </div>
      )}

      <section className="panel" aria-labelledby="batches-h">
        <header className="flex items-baseline justify-between border-b border-rule px-4 py-3">
          <h2 id="batches-h">Recent ingest batches</h2>
          {data.batches.length > 0 && <span className="text-xs text-muted">newest first, last {data.batches.length}</span>}
        </header>
        <Batches batches={data.batches} />
      </section>

      <div className="grid gap-5">
        <section className="panel" aria-labelledby="gaps-h">
          <header className="flex items-baseline justify-between border-b border-rule px-4 py-3">
            <h2 id="gaps-h">Open sequence gaps</h2>
            <span className="text-xs text-muted">
              {data.openGapCount > data.gaps.length ? `newest ${data.gaps.length} of ${countText(data.openGapCount)}` : `${data.gaps.length} open`}
            </span>
          </header>
          {data.gaps.length === 0 ? (
            <Empty>
              No open gaps: every APID's sequence counts run on. When a pass is cut short, upload its recording on{' '}
              <a href="/uploads">Uploads</a> and playback closes the gap.
            </Empty>
          ) : (
            <div className="overflow-x-auto">
              <table className="table-compact">
                <thead>
                  <tr>
                    <th>APID</th>
                    <th className="n">From–to</th>
                    <th className="n">Missing</th>
                    <th>Between (UTC)</th>
                    <th>Detected (UTC)</th>
                  </tr>
                </thead>
                <tbody>
                  {data.gaps.map((g) => (
                    <tr key={g.id}>
                      <td className="num whitespace-nowrap">
                        {g.apid} <span className="unit">{APID_NAMES[g.apid] ?? ''}</span>
                      </td>
                      <td className="n whitespace-nowrap">
                        {g.from}–{g.to}
                      </td>
                      <td className="n">
                        {countText(g.missing)} <span className="unit">pkt</span>
                      </td>
                      <td className="num whitespace-nowrap text-muted">
                        {utcText(g.afterAt)} – {utcClock(g.beforeAt)}
                      </td>
                      <td className="num whitespace-nowrap text-muted">{utcText(g.detectedAt)}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </section>

        <section className="panel" aria-labelledby="quarantine-h">
          <header className="flex items-baseline justify-between border-b border-rule px-4 py-3">
            <h2 id="quarantine-h">Recent quarantined packets</h2>
            <span className="text-xs text-muted">
              {data.quarantinedCount > data.quarantined.length
                ? `newest ${data.quarantined.length} of ${countText(data.quarantinedCount)}`
                : `${data.quarantined.length} kept`}
            </span>
          </header>
          {data.quarantined.length === 0 ? (
            <Empty>
              Nothing quarantined. A packet that fails the checks (CRC, length, APID, loop id) is kept here with its bytes;
              nothing to do until one appears.
            </Empty>
          ) : (
            <div className="overflow-x-auto">
              <table className="table-compact">
                <thead>
                  <tr>
                    <th>Received (UTC)</th>
                    <th className="n">Offset</th>
                    <th>Reason</th>
                    <th className="n">Length</th>
                    <th>First octets (hex)</th>
                  </tr>
                </thead>
                <tbody>
                  {data.quarantined.map((p) => (
                    <tr key={p.id}>
                      <td className="num whitespace-nowrap">{utcText(p.receivedAt)}</td>
                      <td className="n whitespace-nowrap">
                        {countText(p.offset)} <span className="unit">B</span>
                      </td>
                      <td className="whitespace-nowrap">{p.reason}</td>
                      <td className="n">
                        {countText(p.length)} <span className="unit">B</span>
                      </td>
                      <td className="whitespace-nowrap font-mono text-xs">
                        {hexGroups(p.headHex)}
                        {p.length > p.headHex.length / 2 ? <span className="text-muted"> …</span> : null}
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </section>
      </div>
    </div>
  );
}

/** The link island: what reached the ground for one spacecraft, refreshed every 10 s. */
export default function SpacecraftLink(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <LinkPanels {...props} />
    </QueryClientProvider>
  );
}
