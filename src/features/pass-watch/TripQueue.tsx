import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { z } from 'zod';
import { ApiError, http } from '../../lib/http';
import { acknowledgeInputSchema } from '../../lib/trips.schema';
import { LevelBadge, TripStateBadge } from '../../components/LevelBadge';
import { formatUtc, formatValue } from '../../lib/format';
import type { LiveTrip } from '../../lib/server/live';

const warningNoteSchema = acknowledgeInputSchema.extend({
  note: z.string().trim().min(1, 'A warning needs a note: say what you saw and what you are doing about it.').max(2000, 'at most 2000 characters'),
});
type AckForm = z.input<typeof acknowledgeInputSchema>;

function AckTrip({ trip, onDone }: { trip: LiveTrip; onDone: (t: LiveTrip) => void }) {
  const form = useForm<AckForm>({ resolver: zodResolver(trip.level === 'warning' ? warningNoteSchema : acknowledgeInputSchema), defaultValues: { note: '' } });
  const submit = async (values: AckForm) => {
    try {
      const r = await http<{ trip: LiveTrip }>(`/api/trips/${trip.id}/acknowledge`, { method: 'POST', json: values });
      onDone(r.trip);
    } catch (err) {
      if (err instanceof ApiError && err.fields.note) form.setError('note', { message: err.fields.note.join(' ') });
      else form.setError('root', { message: err instanceof ApiError ? err.message : 'Something went wrong; try again.' });
    }
  };
  const id = `ack-note-${trip.id}`;
  return (
    <form onSubmit={form.handleSubmit(submit)} className="mt-2 space-y-1" noValidate>
      <label className="label" htmlFor={id}>
        Note {trip.level === 'warning' ? '(required for a warning)' : '(optional)'}
      </label>
      <textarea id={id} className="field h-14 py-1" {...form.register('note')} aria-invalid={form.formState.errors.note ? 'true' : undefined} />
      {form.formState.errors.note && <p className="error-text">{form.formState.errors.note.message}</p>}
      {form.formState.errors.root && (
        <p role="alert" className="error-text">
          {form.formState.errors.root.message}
        </p>
      )}
      <button className="btn btn-primary h-7 text-xs" type="submit" disabled={form.formState.isSubmitting}>
        Acknowledge
      </button>
    </form>
  );
}

/** The spacecraft's trips that are not resolved: open ones first, each open one with Acknowledge. */
export default function TripQueue({ trips, canAcknowledge, onChange }: { trips: LiveTrip[]; canAcknowledge: boolean; onChange: (t: LiveTrip) => void }) {
  const sorted = [...trips].sort((a, b) => (a.state === b.state ? new Date(b.onset_at).getTime() - new Date(a.onset_at).getTime() : a.state === 'open' ? -1 : 1));
  const open = trips.filter((t) => t.state === 'open').length;
  return (
    <section className="panel" aria-labelledby="trip-queue-title">
      <header className="flex items-baseline justify-between border-b border-rule px-3 py-2">
        <h2 id="trip-queue-title" className="text-sm">
          Trips
        </h2>
        <span className="text-xs text-muted">
          {open} open · {trips.length - open} acknowledged
        </span>
      </header>
      {sorted.length === 0 ? (
        <p className="p-3 text-xs text-muted">No trip is open. Trips appear here as soon as a limit of the active limit set is crossed.</p>
      ) : (
        <ul className="max-h-[32rem] divide-y divide-rule overflow-y-auto">
          {sorted.map((t) => (
            <li key={t.id} className="px-3 py-2" aria-label={`Trip ${t.id}`}>
              <div className="flex flex-wrap items-center gap-2">
                <a href={`/trips/${t.id}`} className="text-xs">
                  #{t.id}
                </a>
                <LevelBadge level={t.level} />
                <TripStateBadge state={t.state} />
                <span className="text-xs text-muted">{t.loop_id === null ? 'body' : `L${t.loop_id}`}</span>
              </div>
              <p className="mt-1 text-xs">
                {t.quantityLabel}:{' '}
                <span className="num font-medium">
                  {formatValue(t.last_value)} <span className="unit">{t.unit}</span>
                </span>{' '}
                <span className="text-muted">
                  (limit {t.side === 'high' ? '≥' : '≤'} <span className="num">{formatValue(t.limit_value)}</span>, peak <span className="num">{formatValue(t.peak_value)}</span>)
                </span>
              </p>
              <p className="text-xs text-muted">
                onset <span className="num">{formatUtc(t.onset_at)}</span> UTC ·{' '}
                {t.cleared_at ? `${t.cleared_note ? 'closed at handover' : 'cleared'} ${formatUtc(t.cleared_at).slice(11)}` : <span className="font-medium text-copper">persists</span>}
              </p>
              {t.state === 'acknowledged' && (
                <p className="text-xs text-muted">
                  acknowledged by {t.acknowledged_by ?? '—'} {t.acknowledge_note ? `: “${t.acknowledge_note}”` : ''}
                </p>
              )}
              {t.state === 'open' && canAcknowledge && <AckTrip trip={t} onDone={onChange} />}
            </li>
          ))}
        </ul>
      )}
    </section>
  );
}
