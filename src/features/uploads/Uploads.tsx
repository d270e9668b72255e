import { useState } from 'react';
import { QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { getQueryClient } from '../../lib/query-client';
import { ApiError } from '../../lib/http';
import { reingestUpload, storedReport, uploadsQuery, type UploadReport, type UploadRow, type UploadsResponse } from './uploads.queries';
import { passUploadFormSchema, type PassUploadForm } from './uploads.schema';
import { uploadPassFile } from './upload-pass';
import { IngestReportView, figuresOf } from './IngestReport';
import { countText, utcText } from '../../lib/format';
import { Size } from '../link/Qty';

interface Option {
  key: string;
  name: string;
}

interface Props {
  spacecraft: Option[];
  stations: Option[];
  initial: UploadsResponse;
  canUpload: boolean;
}

/** What the person can do about an error, after what went wrong. */
export function whatToDo(err: unknown): string {
  if (!(err instanceof ApiError)) return 'Reload the page and try again.';
  if (err.fields.file) return 'Choose the recorded pass file (concatenated space packets) and upload again.';
  if (err.fields.station) return 'Pick a station from the list, or "No station", and upload again.';
  switch (err.status) {
    case 0:
      return 'Check that Millrace is reachable, then upload again; nothing was stored from an upload that did not arrive.';
    case 401:
      return 'Your session has ended: sign in again in another tab, then repeat the upload.';
    case 403:
      return 'Ask an admin for the operator role; operators, engineers and admins may upload.';
    case 404:
      return 'Reload the page to refresh the lists, then try again.';
    case 413:
      return 'Split the recording into smaller files and upload them one by one.';
    default:
      return err.status >= 500
        ? 'Packets stored before the failure are kept. Try again: a second ingest counts those packets as duplicates and changes nothing twice.'
        : 'Correct what the message names and try again.';
  }
}

function ErrorBox({ error, title }: { error: unknown; title: string }) {
  const message = error instanceof Error ? error.message : String(error);
  return (
    <div role="alert" className="rounded border border-warning/40 bg-warning/10 px-3 py-2 text-sm">
      <p className="font-medium text-warning">
        {title}: {message}
      </p>
      <p className="mt-0.5 text-ink">{whatToDo(error)}</p>
    </div>
  );
}

type Phase =
  | { kind: 'idle' }
  | { kind: 'sending'; loaded: number; total: number }
  | { kind: 'ingesting'; total: number }
  | { kind: 'done'; report: UploadReport; fileName: string }
  | { kind: 'failed'; error: unknown };

function ProgressBar({ phase }: { phase: Phase }) {
  if (phase.kind === 'idle' || phase.kind === 'failed') return null;
  const pct = phase.kind === 'sending' ? (phase.total > 0 ? Math.floor((phase.loaded / phase.total) * 100) : 0) : 100;
  const text =
    phase.kind === 'sending'
      ? `Sending ${pct} %`
      : phase.kind === 'ingesting'
        ? `Sent 100 % · Ingesting…`
        : `Sent 100 % · ingested`;
  return (
    <div className="space-y-1">
      <div className="flex justify-between text-xs">
        <span className="num font-medium" aria-live="polite">
          {text}
        </span>
        {phase.kind === 'sending' && (
          <span className="num text-muted">
            <Size bytes={phase.loaded} /> of <Size bytes={phase.total} />
          </span>
        )}
      </div>
      <div
        role="progressbar"
        aria-label="Upload progress"
        aria-valuemin={0}
        aria-valuemax={100}
        aria-valuenow={pct}
        aria-valuetext={text}
        className="h-2 overflow-hidden rounded-full bg-rule"
      >
        <div
          className={`h-full rounded-full transition-[width] duration-150 ${phase.kind === 'ingesting' ? 'animate-pulse bg-copper' : 'bg-gallium'}`}
          style={{ width: `${pct}%` }}
        />
      </div>
    </div>
  );
}

function UploadForm({ spacecraft, stations }: { spacecraft: Option[]; stations: Option[] }) {
  const qc = useQueryClient();
  const [phase, setPhase] = useState<Phase>({ kind: 'idle' });
  const busy = phase.kind === 'sending' || phase.kind === 'ingesting';
  const form = useForm<PassUploadForm>({
    resolver: zodResolver(passUploadFormSchema),
    defaultValues: { spacecraft: spacecraft[0]?.key ?? '', station: '' },
  });
  const errors = form.formState.errors;

  const onSubmit = form.handleSubmit(async (values) => {
    const file = values.file.item(0);
    if (!file) return;
    setPhase({ kind: 'sending', loaded: 0, total: file.size });
    try {
      const report = await uploadPassFile(file, values.spacecraft, values.station || null, {
        onProgress: (loaded, total) => setPhase({ kind: 'sending', loaded, total }),
        onSent: () => setPhase((p) => ({ kind: 'ingesting', total: p.kind === 'sending' ? p.total : file.size })),
      });
      setPhase({ kind: 'done', report, fileName: file.name });
    } catch (err) {
      setPhase({ kind: 'failed', error: err });
    }
    await qc.invalidateQueries({ queryKey: ['uploads'] });
  });

  if (spacecraft.length === 0)
    return (
      <p className="text-muted">
        There is no spacecraft to upload for yet — an engineer adds one by posting its sheet; then come back to upload its passes.
      </p>
    );

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4" aria-label="Upload a recorded pass file">
      <div className="grid gap-4 md:grid-cols-[17rem_12rem_1fr_auto] md:items-start">
        <div>
          <label className="label" htmlFor="up-spacecraft">
            Spacecraft
          </label>
          <select id="up-spacecraft" className="field" disabled={busy} aria-invalid={errors.spacecraft ? 'true' : undefined} {...form.register('spacecraft')}>
            {spacecraft.map((s) => (
              <option key={s.key} value={s.key}>
                {s.key} · {s.name}
              </option>
            ))}
          </select>
          {errors.spacecraft && <p className="error-text mt-1">{errors.spacecraft.message}</p>}
        </div>
        <div>
          <label className="label" htmlFor="up-station">
            Ground station
          </label>
          <select id="up-station" className="field" disabled={busy} {...form.register('station')}>
            <option value="">No station</option>
            {stations.map((s) => (
              <option key={s.key} value={s.key}>
                {s.name}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label className="label" htmlFor="up-file">
            Pass file
          </label>
          <input
            id="up-file"
            type="file"
            className="block w-full text-sm file:mr-3 file:h-8 file:rounded file:border file:border-rule file:bg-panel file:px-3 file:text-sm file:font-medium file:text-ink"
            disabled={busy}
            aria-invalid={errors.file ? 'true' : undefined}
            aria-describedby="up-file-hint"
            {...form.register('file')}
          />
          <p id="up-file-hint" className="mt-1 text-xs text-muted">
            A recording of space packets back to back, as the station wrote it; any size.
          </p>
          {errors.file && <p className="error-text mt-1">{errors.file.message}</p>}
        </div>
        <div className="md:pt-5">
          <button type="submit" className="btn btn-primary" disabled={busy}>
            {busy ? 'Uploading…' : 'Upload'}
          </button>
        </div>
      </div>
      <ProgressBar phase={phase} />
      {phase.kind === 'failed' && <ErrorBox error={phase.error} title="The upload failed" />}
      {phase.kind === 'done' && (
        <div className="rounded border border-rule bg-paper/60 p-3">
          <IngestReportView figures={figuresOf(phase.report)} title={`Report of ${phase.fileName} (upload #${phase.report.uploadId})`} />
        </div>
      )}
    </form>
  );
}

function HistoryRow({ row, canUpload, stationName }: { row: UploadRow; canUpload: boolean; stationName: string | null }) {
  const qc = useQueryClient();
  const [open, setOpen] = useState(false);
  const reingest = useMutation({
    mutationFn: () => reingestUpload(row.id),
    onSuccess: () => {
      setOpen(true);
      return qc.invalidateQueries({ queryKey: ['uploads'] });
    },
    onError: () => setOpen(true),
  });
  const stored = storedReport(row);
  const failure = row.report && 'error' in row.report ? row.report.error : null;
  return (
    <>
      <tr>
        <td className="num whitespace-nowrap">{utcText(row.uploaded_at)}</td>
        <td className="whitespace-nowrap">{row.spacecraft}</td>
        <td title={row.station ?? undefined}>{stationName ?? <span className="text-muted">—</span>}</td>
        <td className="max-w-56 truncate" title={row.file_name}>
          {row.file_name}
        </td>
        <td className="n whitespace-nowrap">
          <Size bytes={row.bytes} />
        </td>
        <td className={row.status === 'failed' ? 'text-warning' : row.status === 'receiving' ? 'text-caution' : ''}>{row.status}</td>
        <td className="n">{stored ? countText(stored.accepted) : '—'}</td>
        <td className="n">{stored ? countText(stored.duplicates) : '—'}</td>
        <td className={`n ${stored && stored.rejectedCount > 0 ? 'text-warning' : ''}`}>{stored ? countText(stored.rejectedCount) : '—'}</td>
        <td className="n">{stored ? countText(stored.gapCount) : '—'}</td>
        <td className="whitespace-nowrap">{row.uploaded_by ?? '—'}</td>
        <td className="whitespace-nowrap text-right">
          <button type="button" className="btn h-7 px-2 text-xs" aria-expanded={open} onClick={() => setOpen((o) => !o)}>
            {open ? 'Hide report' : 'Report'}
          </button>
          {canUpload && row.status === 'done' && (
            <button
              type="button"
              className="btn ml-1 h-7 px-2 text-xs"
              disabled={reingest.isPending}
              onClick={() => reingest.mutate()}
              aria-label={`Re-ingest upload ${row.id}`}
            >
              {reingest.isPending ? 'Re-ingesting…' : 'Re-ingest'}
            </button>
          )}
        </td>
      </tr>
      {open && (
        <tr>
          <td colSpan={12} className="h-auto bg-paper/60 px-4 py-3">
            {reingest.isError && <ErrorBox error={reingest.error} title={`Re-ingest of upload #${row.id} failed`} />}
            {reingest.data ? (
              <IngestReportView figures={figuresOf(reingest.data)} title={`Re-ingest of upload #${row.id}`} />
            ) : stored ? (
              <IngestReportView figures={{ ...stored, sha256: row.sha256 }} title={`Report of upload #${row.id}`} />
            ) : failure ? (
              <p className="error-text">
                This upload failed: {failure}. Re-ingest it to try again{canUpload ? '' : ' (an operator, engineer or admin can)'}.
              </p>
            ) : (
              <p className="text-muted">The file is still arriving; its report appears when the ingest ends.</p>
            )}
          </td>
        </tr>
      )}
    </>
  );
}

function History({ spacecraft, stations, initial, canUpload }: { spacecraft: Option[]; stations: Option[]; initial: UploadsResponse; canUpload: boolean }) {
  const [filter, setFilter] = useState<string>('');
  const q = useQuery({ ...uploadsQuery(filter || null), ...(filter ? {} : { initialData: initial }) });
  return (
    <section className="panel" aria-labelledby="history-h">
      <header className="flex flex-wrap items-center justify-between gap-2 border-b border-rule px-4 py-3">
        <h2 id="history-h">Upload history</h2>
        <label className="flex items-center gap-2 text-xs text-muted">
          Show
          <select
            className="field h-7 w-auto py-0 text-xs"
            aria-label="Show the uploads of"
            value={filter}
            onChange={(e) => setFilter(e.target.value)}
          >
            <option value="">all spacecraft</option>
            {spacecraft.map((s) => (
              <option key={s.key} value={s.key}>
                {s.key}
              </option>
            ))}
          </select>
        </label>
      </header>
      {q.isPending ? (
        <p className="px-4 py-4 text-muted">Loading the uploads…</p>
      ) : q.isError ? (
        <div className="p-4">
          <ErrorBox error={q.error} title="The upload history could not be loaded" />
          <button type="button" className="btn mt-2" onClick={() => q.refetch()}>
            Try again
          </button>
        </div>
      ) : q.data.uploads.length === 0 ? (
        <p className="px-4 py-4 text-muted">
          {canUpload
            ? `No uploads yet${filter ? ` for ${filter}` : ''} — upload a recorded pass file above.`
            : `No uploads yet${filter ? ` for ${filter}` : ''} — an operator, engineer or admin uploads recorded pass files here.`}
        </p>
      ) : (
        <div className="overflow-x-auto">
          <table className="table-compact">
            <thead>
              <tr>
                <th>Uploaded (UTC)</th>
                <th>Spacecraft</th>
                <th>Station</th>
                <th>File</th>
                <th className="n">Size</th>
                <th>Status</th>
                <th className="n">Accepted</th>
                <th className="n">Duplicates</th>
                <th className="n">Rejected</th>
                <th className="n">Gaps</th>
                <th>By</th>
                <th className="text-right">
                  <span className="sr-only">Actions</span>
                </th>
              </tr>
            </thead>
            <tbody>
              {q.data.uploads.map((row) => (
                <HistoryRow
                  key={row.id}
                  row={row}
                  canUpload={canUpload}
                  stationName={row.station ? (stations.find((s) => s.key === row.station)?.name ?? row.station) : null}
                />
              ))}
            </tbody>
          </table>
          {q.data.uploads.length >= 50 && <p className="px-4 py-2 text-xs text-muted">The 50 latest uploads; choose a spacecraft to see its own.</p>}
        </div>
      )}
    </section>
  );
}

/** The Uploads island: send a recorded pass file with progress, read its report, and the history. */
export default function Uploads({ spacecraft, stations, initial, canUpload }: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <div className="space-y-5">
        {canUpload ? (
          <section className="panel p-4" aria-labelledby="upload-h">
            <h2 id="upload-h" className="mb-3">
              Upload a recorded pass file
            </h2>
            <UploadForm spacecraft={spacecraft} stations={stations} />
          </section>
        ) : (
          <p className="panel px-4 py-3 text-muted">
            Operators, engineers and admins upload recorded pass files here; your roles show the history only.
          </p>
        )}
        <History spacecraft={spacecraft} stations={stations} initial={initial} canUpload={canUpload} />
      </div>
    </QueryClientProvider>
  );
}
