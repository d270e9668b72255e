import type { ReactNode } from 'react';
import type { StoredUploadReport, UploadReport } from './uploads.queries';
import { APID_NAMES, countText } from '../../lib/format';
import { Size } from '../link/Qty';

/** The report of an upload or a re-ingest, in one shape. */
export type ReportFigures = StoredUploadReport & { sha256?: string | null };

/** The figures of a fresh answer from the API. */
export function figuresOf(r: UploadReport): ReportFigures {
  return {
    bytes: r.bytes,
    accepted: r.accepted,
    duplicates: r.duplicates,
    idle: r.idle,
    rejectedCount: r.rejectedCount,
    rejected: r.rejected,
    gapCount: r.gapCount,
    gaps: r.gaps,
    sha256: r.sha256,
  };
}

function Figure({ label, value, tone }: { label: string; value: ReactNode; tone?: 'warning' | 'caution' }) {
  return (
    <div className="min-w-24">
      <dt className="text-xs text-muted">{label}</dt>
      <dd className={`num text-lg font-semibold ${tone === 'warning' ? 'text-warning' : tone === 'caution' ? 'text-caution' : 'text-ink'}`}>{value}</dd>
    </div>
  );
}

/** Accepted / duplicates / rejected (offsets and reasons) / gaps of one ingest. */
export function IngestReportView({ figures, title }: { figures: ReportFigures; title: string }) {
  const f = figures;
  return (
    <section aria-label={title} className="space-y-3">
      <h3 className="text-sm font-semibold">{title}</h3>
      <dl className="flex flex-wrap gap-x-8 gap-y-2">
        <Figure label="Accepted" value={countText(f.accepted)} />
        <Figure label="Duplicates" value={countText(f.duplicates)} />
        <Figure label="Rejected" value={countText(f.rejectedCount)} tone={f.rejectedCount > 0 ? 'warning' : undefined} />
        <Figure label="Sequence gaps" value={countText(f.gapCount)} tone={f.gapCount > 0 ? 'caution' : undefined} />
        <Figure label="Idle packets" value={countText(f.idle)} />
        <Figure label="Size" value={<Size bytes={f.bytes} />} />
      </dl>
      {f.sha256 && (
        <p className="text-xs text-muted">
          SHA-256 <code className="font-mono">{f.sha256}</code>
        </p>
      )}
      {f.accepted === 0 && f.duplicates > 0 && (
        <p className="text-xs text-muted">
          Every readable packet was already stored, so nothing changed: that is what a second ingest of the same file does.
          {f.rejectedCount > 0 ? ' Rejected packets are refused again and kept again in quarantine.' : ''}
        </p>
      )}
      {f.accepted === 0 && f.duplicates === 0 && f.rejectedCount > 0 && (
        <p className="error-text">
          No packet of this file could be read. Check that it is a concatenation of space packets of the telemetry contract, recorded for
          this spacecraft.
        </p>
      )}
      <div className="grid gap-4 lg:grid-cols-2">
        <div>
          <h4 className="label">Rejected packets</h4>
          {f.rejected.length === 0 ? (
            <p className="text-xs text-muted">None: every packet passed the checks.</p>
          ) : (
            <>
              <table className="table-compact" aria-label="Rejected packets">
                <thead>
                  <tr>
                    <th className="n">Offset</th>
                    <th>Reason</th>
                  </tr>
                </thead>
                <tbody>
                  {f.rejected.map((r, i) => (
                    <tr key={`${r.offset}-${i}`}>
                      <td className="n">
                        {countText(r.offset)} <span className="unit">B</span>
                      </td>
                      <td>{r.reason}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
              {f.rejectedCount > f.rejected.length && (
                <p className="mt-1 text-xs text-muted">
                  The first {countText(f.rejected.length)} of {countText(f.rejectedCount)}; the spacecraft's link page lists the quarantined packets.
                </p>
              )}
            </>
          )}
        </div>
        <div>
          <h4 className="label">Sequence gaps</h4>
          {f.gaps.length === 0 ? (
            <p className="text-xs text-muted">None: sequence counts run on without a hole.</p>
          ) : (
            <>
              <table className="table-compact" aria-label="Sequence gaps">
                <thead>
                  <tr>
                    <th>APID</th>
                    <th className="n">From</th>
                    <th className="n">To</th>
                    <th className="n">Missing</th>
                  </tr>
                </thead>
                <tbody>
                  {f.gaps.map((g, i) => (
                    <tr key={`${g.apid}-${g.from}-${i}`}>
                      <td className="num">
                        {g.apid} <span className="unit">{APID_NAMES[g.apid] ?? ''}</span>
                      </td>
                      <td className="n">{g.from}</td>
                      <td className="n">{g.to}</td>
                      <td className="n">
                        {countText(((g.to - g.from + 16384) % 16384) + 1)} <span className="unit">pkt</span>
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
              {f.gapCount > f.gaps.length && (
                <p className="mt-1 text-xs text-muted">
                  The first {countText(f.gaps.length)} of {countText(f.gapCount)}.
                </p>
              )}
            </>
          )}
        </div>
      </div>
    </section>
  );
}
