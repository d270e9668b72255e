import { useRef, useState } from 'react';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { QueryClientProvider, useQuery, useQueryClient } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { ApiError } from '../../lib/http';
import { formatUtc } from '../../lib/format';
import { notesQuery } from './casefile.queries';
import { ATTACHMENT_TYPES, MAX_ATTACHMENT_BYTES, MAX_ATTACHMENTS_PER_NOTE, noteInputSchema, type CasefileNote, type NoteInput } from './casefile.schema';

interface Envelope {
  error?: { code?: string; message?: string; fields?: Record<string, string[]> };
}

const ACCEPT = Object.values(ATTACHMENT_TYPES).flat().join(',');

function sizeText(bytes: number): string {
  if (bytes < 1024) return `${bytes} B`;
  if (bytes < 1024 * 1024) return `${(bytes / 1024).toFixed(1)} kB`;
  return `${(bytes / 1024 / 1024).toFixed(1)} MB`;
}

/** POST a note as multipart with XMLHttpRequest, whose upload events give real progress. */
function postNote(tripId: number, body: string, files: File[], onProgress: (f: number) => void): Promise<{ notes: CasefileNote[] }> {
  const form = new FormData();
  form.append('body', body);
  for (const f of files) form.append('files', f, f.name);
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', `/api/trips/${tripId}/notes`);
    xhr.setRequestHeader('accept', 'application/json');
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) onProgress(e.loaded / e.total);
    };
    xhr.onerror = () => reject(new ApiError(0, 'NETWORK', 'Millrace cannot be reached. Check the connection and add the note again.'));
    xhr.onload = () => {
      let parsed: unknown = null;
      try {
        parsed = xhr.responseText ? JSON.parse(xhr.responseText) : null;
      } catch {
        parsed = null;
      }
      if (xhr.status >= 200 && xhr.status < 300 && parsed) return resolve(parsed as { notes: CasefileNote[] });
      const e = (parsed as Envelope | null)?.error;
      reject(new ApiError(xhr.status, e?.code ?? `HTTP_${xhr.status}`, e?.message ?? `The server answered ${xhr.status}.`, e?.fields ?? {}));
    };
    xhr.send(form);
  });
}

/** Client-side check of chosen files (the server checks the contents again). */
function fileProblem(files: File[]): string | null {
  if (files.length > MAX_ATTACHMENTS_PER_NOTE) return `A note takes at most ${MAX_ATTACHMENTS_PER_NOTE} attachments.`;
  for (const f of files) {
    const ext = f.name.slice(f.name.lastIndexOf('.')).toLowerCase();
    if (!(Object.values(ATTACHMENT_TYPES).flat() as string[]).includes(ext)) return `${f.name}: attach PNG or JPEG images, CSV files or PDF documents.`;
    if (f.size > MAX_ATTACHMENT_BYTES) return `${f.name} is ${sizeText(f.size)}; the limit is 20 MB.`;
    if (f.size === 0) return `${f.name} is empty.`;
  }
  return null;
}

function Thread({ tripId, initial, canAdd, rule }: Props) {
  const qc = useQueryClient();
  const q = useQuery({ ...notesQuery(tripId), initialData: { notes: initial } });
  const [files, setFiles] = useState<File[]>([]);
  const [progress, setProgress] = useState<number | null>(null);
  const [fileError, setFileError] = useState<string | null>(null);
  const input = useRef<HTMLInputElement>(null);
  const form = useForm<NoteInput>({ resolver: zodResolver(noteInputSchema), defaultValues: { body: '' } });
  const notes = q.data.notes;

  const submit = form.handleSubmit(async (values) => {
    const problem = fileProblem(files);
    if (problem) return setFileError(problem);
    setFileError(null);
    setProgress(0);
    try {
      const r = await postNote(tripId, values.body, files, setProgress);
      qc.setQueryData(notesQuery(tripId).queryKey, { notes: r.notes });
      form.reset({ body: '' });
      setFiles([]);
      if (input.current) input.current.value = '';
    } catch (err) {
      if (err instanceof ApiError) {
        if (err.fields.files) setFileError(err.message);
        else if (err.fields.body) form.setError('body', { message: err.fields.body.join(' ') });
        else form.setError('root', { message: err.status === 403 ? `${err.message}` : err.message });
      } else form.setError('root', { message: 'Something went wrong; add the note again.' });
    } finally {
      setProgress(null);
    }
  });

  return (
    <div className="space-y-3">
      {notes.length === 0 ? (
        <p className="text-sm text-muted">{canAdd ? 'No notes yet. Write what you looked at and what you found; attach plots or data.' : 'No notes yet. Analysts and engineers write notes here.'}</p>
      ) : (
        <ol className="space-y-3" aria-label="Notes">
          {notes.map((n) => (
            <li key={n.id} className="rounded border border-rule p-3">
              <p className="text-xs text-muted">
                <span className="font-medium text-ink">{n.author ?? 'former user'}</span> · <span className="num">{formatUtc(n.createdAt)} UTC</span>
              </p>
              <p className="mt-1 whitespace-pre-wrap text-sm">{n.body}</p>
              {n.attachments.length > 0 && (
                <ul className="mt-2 flex flex-wrap gap-2" aria-label="Attachments">
                  {n.attachments.map((a) => (
                    <li key={a.id} className="text-xs">
                      {a.mediaType.startsWith('image/') ? (
                        <a href={a.url} target="_blank" rel="noopener" className="block rounded border border-rule p-1 no-underline hover:border-gallium hover:no-underline">
                          <img src={a.url} alt={`Attachment ${a.fileName}`} className="h-24 max-w-[12rem] object-contain" loading="lazy" />
                          <span className="mt-1 block truncate text-muted">
                            {a.fileName} · {sizeText(a.bytes)}
                          </span>
                        </a>
                      ) : (
                        <a href={a.url} className="inline-flex items-center gap-1 rounded border border-rule px-2 py-1" download={a.fileName}>
                          {a.mediaType === 'application/pdf' ? 'PDF' : 'CSV'} · {a.fileName} <span className="text-muted">{sizeText(a.bytes)}</span>
                        </a>
                      )}
                    </li>
                  ))}
                </ul>
              )}
            </li>
          ))}
        </ol>
      )}
      {canAdd ? (
        <form onSubmit={submit} className="space-y-2" noValidate aria-label="Add a note">
          <label className="label" htmlFor="note-body">
            New note
          </label>
          <textarea id="note-body" className="field h-24 py-1" {...form.register('body')} aria-invalid={form.formState.errors.body ? 'true' : undefined} />
          {form.formState.errors.body && <p className="error-text">{form.formState.errors.body.message}</p>}
          <label className="label" htmlFor="note-files">
            Attachments (PNG, JPEG, CSV or PDF; up to {MAX_ATTACHMENTS_PER_NOTE} files of 20 MB each)
          </label>
          <input
            id="note-files"
            ref={input}
            type="file"
            multiple
            accept={ACCEPT}
            className="block text-xs file:btn file:mr-2 file:h-7 file:text-xs"
            onChange={(e) => {
              const chosen = Array.from(e.target.files ?? []);
              setFiles(chosen);
              setFileError(fileProblem(chosen));
            }}
          />
          {files.length > 0 && (
            <ul className="text-xs text-muted">
              {files.map((f) => (
                <li key={f.name}>
                  {f.name} · {sizeText(f.size)}
                </li>
              ))}
            </ul>
          )}
          {fileError && (
            <p role="alert" className="error-text">
              {fileError}
            </p>
          )}
          {form.formState.errors.root && (
            <p role="alert" className="error-text">
              {form.formState.errors.root.message}
            </p>
          )}
          {progress !== null && (
            <div className="space-y-1" aria-live="polite">
              <div className="h-1.5 overflow-hidden rounded bg-rule" role="progressbar" aria-label="Upload progress" aria-valuemin={0} aria-valuemax={100} aria-valuenow={Math.round(progress * 100)}>
                <div className="h-1.5 bg-gallium transition-all" style={{ width: `${Math.round(progress * 100)}%` }} />
              </div>
              <p className="text-xs text-muted">{progress < 1 ? `Uploading… ${Math.round(progress * 100)} %` : 'Checking the files…'}</p>
            </div>
          )}
          <button className="btn btn-primary" type="submit" disabled={form.formState.isSubmitting}>
            Add note
          </button>
        </form>
      ) : (
        <p className="text-xs text-muted">{rule}</p>
      )}
    </div>
  );
}

interface Props {
  tripId: number;
  initial: CasefileNote[];
  canAdd: boolean;
  rule: string;
}

/** The Casefile's notes thread: everyone signed in reads; analysts and engineers add notes with attachments. */
export default function Notes(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Thread {...props} />
    </QueryClientProvider>
  );
}
