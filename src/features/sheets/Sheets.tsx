import { useMemo, useState } from 'react';
import { QueryClientProvider, useQuery } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { sheetInForce, sheetsQuery, type SheetRow, type SheetsResponse } from './sheets.queries';
import { SheetView, canonicalSheet } from './SheetView';
import { SheetUpload } from './SheetUpload';
import { utcText } from '../../lib/format';
import { diffSummary, sheetHistoryDiffs } from '../../lib/sheet-diff';
import { SheetDiffView } from './SheetDiff';

interface Props {
  spacecraft: { key: string; name: string };
  initial: SheetsResponse;
  canUpload: boolean;
  /** The server's clock at render (ISO), so "in force" reads the same before and after hydration. */
  now: string;
  /** A change of a loop's ideal torque constant beyond this fraction is called out (the upload's rule). */
  ktWarningFraction: number;
}

function stateOf(row: SheetRow, inForce: SheetRow | undefined, now: string): string {
  if (inForce && row.id === inForce.id) return 'in force';
  return row.effective_from > now ? 'planned' : 'superseded';
}

function SheetsPanels({ spacecraft, initial, canUpload, now, ktWarningFraction }: Props) {
  const q = useQuery({ ...sheetsQuery(spacecraft.key), initialData: initial });
  const sheets = q.data.sheets;
  const inForce = sheetInForce(sheets, now);
  const [selectedId, setSelectedId] = useState<number | null>(inForce?.id ?? null);
  const [seed, setSeed] = useState<{ text: string; n: number } | null>(null);
  const selected = sheets.find((s) => s.id === selectedId) ?? inForce;
  const history = useMemo(() => sheetHistoryDiffs(sheets, { ktWarningFraction }), [sheets, ktWarningFraction]);
  const selectedHistory = selected ? history.get(selected.id) : undefined;

  const startFrom = (row: SheetRow) => {
    setSeed((s) => ({ text: JSON.stringify(canonicalSheet(row.sheet), null, 2), n: (s?.n ?? 0) + 1 }));
    document.getElementById('sheet-upload')?.scrollIntoView({ behavior: 'smooth', block: 'start' });
  };

  return (
    <div className="space-y-5">
      {q.isError && (
        <div role="alert" className="panel border-warning/40 px-4 py-3 text-warning">
          The sheet list could not be refreshed: {q.error.message}.{' '}
          <button type="button" className="btn ml-2" onClick={() => q.refetch()}>
            Try again
          </button>
        </div>
      )}
      <div className="grid items-start gap-5 xl:grid-cols-[30rem_1fr]">
        <section className="panel" aria-labelledby="history-h">
          <header className="border-b border-rule px-4 py-3">
            <h2 id="history-h">Sheet history</h2>
            <p className="text-xs text-muted">Newest effective date first; choose one to read it.</p>
          </header>
          {sheets.length === 0 ? (
            <p className="px-4 py-4 text-muted">
              {canUpload
                ? 'No sheet on record — upload the spacecraft’s sheet below.'
                : 'No sheet on record — an engineer uploads the spacecraft’s sheet here.'}
            </p>
          ) : (
            <table className="table-compact">
              <thead>
                <tr>
                  <th>Effective from (UTC)</th>
                  <th>Uploaded</th>
                  <th>State</th>
                  <th>Change</th>
                </tr>
              </thead>
              <tbody>
                {sheets.map((s) => {
                  const isSel = selected?.id === s.id;
                  return (
                    <tr key={s.id} className={isSel ? 'bg-gallium/10' : ''}>
                      <td>
                        <button
                          type="button"
                          className="num text-left font-medium text-gallium hover:underline"
                          aria-pressed={isSel}
                          onClick={() => setSelectedId(s.id)}
                        >
                          {utcText(s.effective_from).slice(0, 16)}
                        </button>
                      </td>
                      <td className="text-xs">
                        {s.uploaded_by ?? 'demo seed'}
                        <div className="num text-muted">{utcText(s.uploaded_at).slice(0, 16)}</div>
                      </td>
                      <td className={`text-xs ${stateOf(s, inForce, now) === 'in force' ? 'font-medium text-nominal' : 'text-muted'}`}>
                        {stateOf(s, inForce, now)}
                      </td>
                      <td className="text-xs">
                        {diffSummary(history.get(s.id)?.diff ?? null)}
                        {(history.get(s.id)?.diff?.idealKtShifts ?? []).map((k) => (
                          <div key={k.loopId} className="font-semibold text-caution">
                            <span aria-hidden="true">▲ </span>L{k.loopId} ideal kT {k.change > 0 ? '+' : '−'}
                            {Math.abs(k.change * 100).toFixed(1)} %
                          </div>
                        ))}
                      </td>
                    </tr>
                  );
                })}
              </tbody>
            </table>
          )}
        </section>
        <div className="space-y-2">
          {selected ? (
            <>
              <SheetDiffView diff={selectedHistory?.diff ?? null} previousFrom={selectedHistory?.previous?.effective_from ?? null} fraction={ktWarningFraction} />
              <SheetView row={selected} state={stateOf(selected, inForce, now)} />
              {canUpload && (
                <button type="button" className="btn" onClick={() => startFrom(selected)}>
                  Start a new sheet from this one
                </button>
              )}
            </>
          ) : (
            <p className="panel px-4 py-4 text-muted">Choose a sheet on the left to read it.</p>
          )}
        </div>
      </div>
      {canUpload ? (
        <section id="sheet-upload" className="panel p-4" aria-labelledby="upload-h">
          <h2 id="upload-h">Upload a sheet</h2>
          <p className="mb-3 text-xs text-muted">
            A new sheet for {spacecraft.key} takes effect at its effectiveFrom and leaves the earlier ones on record.
          </p>
          <SheetUpload spacecraft={spacecraft.key} seed={seed} onStored={setSelectedId} />
        </section>
      ) : (
        <p className="text-xs text-muted">Engineers and admins upload new sheets here.</p>
      )}
    </div>
  );
}

/** The Sheets island of one spacecraft: history, a readable view, and the engineer's upload. */
export default function Sheets(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <SheetsPanels {...props} />
    </QueryClientProvider>
  );
}
