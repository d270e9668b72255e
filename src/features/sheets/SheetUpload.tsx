import { useEffect, useRef, useState, type ChangeEvent } from 'react';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { useMutation, useQueryClient } from '@tanstack/react-query';
import { ApiError } from '../../lib/http';
import { postSheet, type SheetCreated } from './sheets.queries';
import { parseJsonText, sheetUploadFormSchema, type SheetUploadForm } from './sheets.schema';
import { utcText } from '../../lib/format';

function advice(err: unknown): string {
  if (!(err instanceof ApiError)) return 'Reload the page and try again.';
  if (err.status === 409) return 'Another sheet takes effect at that exact time: change effectiveFrom and upload again.';
  if (err.status === 400) return 'Correct each field named below in the JSON and upload again.';
  if (err.status === 401) return 'Your session has ended: sign in again in another tab, then upload again.';
  if (err.status === 403) return 'Only engineers and admins add sheets; ask one to upload it.';
  if (err.status === 0) return 'Check that Millrace is reachable and upload again.';
  return 'Try again; if it keeps failing, tell an admin (the server has logged the error).';
}

function KtShiftWarning({ created }: { created: SheetCreated }) {
  return (
    <section role="alert" aria-labelledby="kt-shift-h" className="rounded border border-copper/60 bg-copper/10 px-4 py-3">
      <h3 id="kt-shift-h" className="font-semibold text-copper">
        The ideal torque constant changes
      </h3>
      <p className="mt-1">
        Against the sheet before it, this sheet moves the ideal torque constant of{' '}
        {created.idealKtShifts.map((s) => `L${s.loopId}`).join(', ')}. That changes every effectiveness figure after{' '}
        <span className="num">{utcText(created.effectiveFrom)}</span> UTC, since effectiveness is the estimated torque constant over
        the ideal one. Make sure the change of geometry or field is real.
      </p>
      <table className="table-compact mt-2 w-auto" aria-label="Ideal torque constant shifts">
        <thead>
          <tr>
            <th>Loop</th>
            <th className="n">Before</th>
            <th className="n">After</th>
            <th className="n">Change</th>
          </tr>
        </thead>
        <tbody>
          {created.idealKtShifts.map((s) => (
            <tr key={s.loopId}>
              <td className="num">L{s.loopId}</td>
              <td className="n">
                {(s.before * 1000).toPrecision(4)} <span className="unit">mN·m/A</span>
              </td>
              <td className="n">
                {(s.after * 1000).toPrecision(4)} <span className="unit">mN·m/A</span>
              </td>
              <td className="n font-medium">
                {s.change > 0 ? '+' : '−'}
                {Math.abs(s.change * 100).toFixed(1)} <span className="unit">%</span>
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </section>
  );
}

/** The engineer's sheet upload: a .json file or pasted JSON, every server error under its JSON path. */
export function SheetUpload({ spacecraft, seed, onStored }: { spacecraft: string; seed: { text: string; n: number } | null; onStored: (id: number) => void }) {
  const qc = useQueryClient();
  const [fileName, setFileName] = useState<string | null>(null);
  const fileInput = useRef<HTMLInputElement>(null);
  // Once the text is edited or replaced, it is no longer the chosen file's.
  const forgetFile = () => {
    setFileName(null);
    if (fileInput.current) fileInput.current.value = '';
  };
  const [fileError, setFileError] = useState<string | null>(null);
  const form = useForm<SheetUploadForm>({ resolver: zodResolver(sheetUploadFormSchema), defaultValues: { json: '' } });
  const mutation = useMutation({
    mutationFn: (sheet: unknown) => postSheet(spacecraft, sheet),
    onSuccess: async (created) => {
      await qc.invalidateQueries({ queryKey: ['sheets', spacecraft] });
      await qc.invalidateQueries({ queryKey: ['fleet'] });
      onStored(created.id);
    },
  });

  const { setValue } = form;
  useEffect(() => {
    if (seed) {
      setValue('json', seed.text, { shouldValidate: true });
      forgetFile();
    }
  }, [seed, setValue]);

  const onFile = async (e: ChangeEvent<HTMLInputElement>) => {
    const file = e.target.files?.item(0);
    setFileError(null);
    if (!file) return;
    try {
      const text = await file.text();
      setFileName(file.name);
      form.setValue('json', text, { shouldValidate: true, shouldDirty: true });
      mutation.reset();
    } catch {
      setFileError(`${file.name} could not be read; choose the file again or paste its text.`);
    }
  };

  const onSubmit = form.handleSubmit((values) => {
    const parsed = parseJsonText(values.json);
    if (parsed.ok) mutation.mutate(parsed.value);
  });

  const err = mutation.error;
  const fields = err instanceof ApiError ? Object.entries(err.fields) : [];
  const jsonError = form.formState.errors.json?.message;

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-3" aria-label="Upload a sheet">
      <div className="flex flex-wrap items-end gap-3">
        <div>
          <label className="label" htmlFor="sheet-file">
            Choose a .json file
          </label>
          <input
            id="sheet-file"
            ref={fileInput}
            type="file"
            accept=".json,application/json"
            onChange={onFile}
            className="block text-sm file:mr-3 file:h-8 file:rounded file:border file:border-rule file:bg-panel file:px-3 file:text-sm file:font-medium file:text-ink"
          />
        </div>
        <p className="pb-1.5 text-xs text-muted">{fileName ? `Loaded ${fileName} into the text below; edit it if needed.` : 'or paste the JSON below'}</p>
      </div>
      {fileError && <p className="error-text">{fileError}</p>}
      <div>
        <label className="label" htmlFor="sheet-json">
          Sheet JSON
        </label>
        <textarea
          id="sheet-json"
          rows={14}
          spellCheck={false}
          className="field h-auto py-1.5 font-mono text-xs"
          aria-invalid={jsonError ? 'true' : undefined}
          aria-describedby={jsonError ? 'sheet-json-error' : undefined}
          placeholder='{ "sheetVersion": 1, "spacecraft": { "key": "…", "name": "…" }, "effectiveFrom": "2026-12-01T00:00:00Z", … }'
          {...form.register('json', {
            onChange: () => {
              mutation.reset();
              if (fileName) forgetFile();
            },
          })}
        />
        {jsonError && (
          <p id="sheet-json-error" className="error-text mt-1">
            {jsonError}
          </p>
        )}
      </div>
      <div className="flex items-center gap-3">
        <button type="submit" className="btn btn-primary" disabled={mutation.isPending}>
          {mutation.isPending ? 'Checking and storing…' : 'Upload sheet'}
        </button>
        <p className="text-xs text-muted">The server checks every field; the sheet takes effect at its effectiveFrom.</p>
      </div>

      {mutation.isError && (
        <div role="alert" className="rounded border border-warning/40 bg-warning/10 px-3 py-2">
          <p className="font-medium text-warning">The sheet was not stored: {err?.message}</p>
          <p className="mt-0.5">{advice(err)}</p>
          {fields.length > 0 && (
            <ul className="mt-2 space-y-1.5" aria-label="Problems by JSON path">
              {fields.map(([path, messages]) => (
                <li key={path} aria-label={path} className="rounded bg-panel px-2 py-1">
                  <code className="font-mono text-xs font-semibold text-ink">{path}</code>
                  <ul className="ml-4 list-disc">
                    {messages.map((m, i) => (
                      <li key={i} className="error-text">
                        {m}
                      </li>
                    ))}
                  </ul>
                </li>
              ))}
            </ul>
          )}
        </div>
      )}

      {mutation.isSuccess && (
        <div className="space-y-3">
          <p role="status" className="rounded border border-nominal/40 bg-nominal/10 px-3 py-2">
            Sheet stored (#{mutation.data.id}), effective from <span className="num">{utcText(mutation.data.effectiveFrom)}</span> UTC.
            {mutation.data.idealKtShifts.length === 0 && ' No loop’s ideal torque constant shifts against the sheet before it.'}
          </p>
          {mutation.data.idealKtShifts.length > 0 && <KtShiftWarning created={mutation.data} />}
        </div>
      )}
    </form>
  );
}
