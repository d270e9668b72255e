import { useEffect } from 'react';
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { ApiError } from '../../lib/http';
import { formatUtc } from '../../lib/format';
import { LevelBadge, TripStateBadge } from '../../components/LevelBadge';
import { passLogQuery, postPassNote, type PassLogResponse } from './pass-watch.queries';
import { passNoteInputSchema, type PassNoteInput } from './pass-watch.schema';

const hm = (iso: string) => formatUtc(iso).slice(11, 16);

/** The pass log: a handover form for ended passes and the passes of the last day with notes, trips and data. */
export default function PassLog({ spacecraft, initial, canWrite }: { spacecraft: string; initial: PassLogResponse; canWrite: boolean }) {
  const qc = useQueryClient();
  const q = useQuery({ ...passLogQuery(spacecraft), initialData: initial });
  const ended = (q.data?.passes ?? []).filter((p) => p.status === 'ended');
  const first = ended[0];
  const form = useForm<PassNoteInput>({
    resolver: zodResolver(passNoteInputSchema),
    defaultValues: { station: first?.station ?? '', aos: first?.aos ?? '', note: '' },
  });
  // When a pass ends, the form moves to it, unless a note is being written for another one.
  const firstKey = first ? `${first.station}|${first.aos}` : '';
  useEffect(() => {
    if (first && (!form.getValues('aos') || !form.getValues('note').trim())) {
      form.setValue('station', first.station);
      form.setValue('aos', first.aos);
    }
  }, [firstKey]);
  const save = useMutation({
    mutationFn: (input: PassNoteInput) => postPassNote(spacecraft, input),
    onSuccess: () => {
      form.reset({ ...form.getValues(), note: '' });
      return qc.invalidateQueries({ queryKey: passLogQuery(spacecraft).queryKey });
    },
    onError: (err) => {
      if (err instanceof ApiError) {
        for (const [field, msgs] of Object.entries(err.fields)) form.setError(field as keyof PassNoteInput, { message: msgs.join(' ') });
        if (!Object.keys(err.fields).length) form.setError('root', { message: err.message });
      } else form.setError('root', { message: 'Something went wrong; try again.' });
    },
  });
  const passKey = `${form.watch('station')}|${form.watch('aos')}`;
  return (
    <section className="panel" aria-labelledby="pass-log-title">
      <header className="flex items-baseline justify-between border-b border-rule px-3 py-2">
        <h2 id="pass-log-title" className="text-sm">
          Pass log
        </h2>
        <span className="text-xs text-muted">Passes of the last 24 h · newest first</span>
      </header>
      {q.data?.error && <p className="px-3 pt-2 text-xs text-warning">{q.data.error}</p>}
      {canWrite && (
        <form className="space-y-2 border-b border-rule p-3" onSubmit={form.handleSubmit((v) => save.mutate(v))} noValidate aria-label="Handover note">
          {ended.length === 0 ? (
            <p className="text-xs text-muted">No pass has ended in the last day; the handover form opens after the first LOS.</p>
          ) : (
            <>
              <label className="label" htmlFor="handover-pass">
                Pass
              </label>
              <select
                id="handover-pass"
                className="field"
                value={passKey}
                onChange={(e) => {
                  const [station, aos] = e.target.value.split('|');
                  form.setValue('station', station ?? '');
                  form.setValue('aos', aos ?? '');
                }}
              >
                {ended.map((p) => (
                  <option key={`${p.station}|${p.aos}`} value={`${p.station}|${p.aos}`}>
                    {p.stationName} · AOS {formatUtc(p.aos)} – LOS {hm(p.los)} UTC{p.notes.length ? ` · ${p.notes.length} note${p.notes.length === 1 ? '' : 's'}` : ''}
                  </option>
                ))}
              </select>
              {(form.formState.errors.aos || form.formState.errors.station) && <p className="error-text">{form.formState.errors.aos?.message ?? form.formState.errors.station?.message}</p>}
              <label className="label" htmlFor="handover-note">
                Handover note
              </label>
              <textarea id="handover-note" className="field h-20 py-1" {...form.register('note')} aria-invalid={form.formState.errors.note ? 'true' : undefined} />
              {form.formState.errors.note && <p className="error-text">{form.formState.errors.note.message}</p>}
              {form.formState.errors.root && (
                <p role="alert" className="error-text">
                  {form.formState.errors.root.message}
                </p>
              )}
              <button className="btn btn-primary" type="submit" disabled={save.isPending}>
                {save.isPending ? 'Saving…' : 'Save handover note'}
              </button>
            </>
          )}
        </form>
      )}
      {q.data && q.data.passes.length === 0 ? (
        <p className="p-3 text-xs text-muted">No pass in the last day. Passes appear here from AOS on.</p>
      ) : (
        <ol className="max-h-[36rem] divide-y divide-rule overflow-y-auto" aria-label="Passes">
          {(q.data?.passes ?? []).map((p) => (
            <li key={`${p.station}|${p.aos}`} className="px-3 py-2 text-xs" aria-label={`Pass over ${p.stationName} at ${formatUtc(p.aos)}`}>
              <div className="flex flex-wrap items-baseline justify-between gap-2">
                <span className="font-medium text-ink">
                  {p.stationName} <span className="num font-normal text-muted">{formatUtc(p.aos)} – {hm(p.los)} UTC</span>
                </span>
                <span className={p.status === 'in progress' ? 'font-medium text-copper' : 'text-muted'}>
                  {p.status}
                  {p.maxElevation_deg !== null ? ` · max el ${p.maxElevation_deg.toFixed(0)}°` : ''}
                </span>
              </div>
              <p className="num mt-0.5 text-muted">
                {p.data.batches} batch{p.data.batches === 1 ? '' : 'es'} · {p.data.realtime.toLocaleString('en')} real-time + {p.data.playback.toLocaleString('en')} playback packets
                {p.data.duplicates ? ` · ${p.data.duplicates.toLocaleString('en')} duplicates` : ''}
                {p.data.rejected ? ` · ${p.data.rejected} rejected` : ''} · {p.data.missing.toLocaleString('en')} missing
              </p>
              {p.trips.length > 0 && (
                <ul className="mt-1 space-y-0.5">
                  {p.trips.map((t) => (
                    <li key={t.id} className="flex flex-wrap items-center gap-2">
                      <a href={`/trips/${t.id}`}>#{t.id}</a>
                      <LevelBadge level={t.level} />
                      <TripStateBadge state={t.state} />
                      <span>
                        {t.loopId === null ? 'body' : `L${t.loopId}`} · {t.quantityLabel}
                      </span>
                    </li>
                  ))}
                </ul>
              )}
              {p.notes.map((n) => (
                <blockquote key={n.id} className="mt-1 border-l-2 border-gallium pl-2 text-ink">
                  <p className="whitespace-pre-wrap">{n.note}</p>
                  <footer className="text-muted">
                    {n.author ?? 'someone'} · {formatUtc(n.createdAt)} UTC
                  </footer>
                </blockquote>
              ))}
            </li>
          ))}
        </ol>
      )}
    </section>
  );
}
