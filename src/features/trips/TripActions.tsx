import { useState } from 'react';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { z } from 'zod';
import { ApiError, http } from '../../lib/http';
import { formatUtc } from '../../lib/format';
import { acknowledgeInputSchema } from '../../lib/trips.schema';
import { conclusionInputSchema } from '../casefile/casefile.schema';

interface Props {
  tripId: number;
  state: 'open' | 'acknowledged' | 'resolved';
  level: 'caution' | 'warning';
  canAcknowledge: boolean;
  /** The user may write the conclusion and resolve (the resolve rule for this trip's kind). */
  canResolve: boolean;
  resolveRule: string;
  conclusion: { conclusion: string; updatedAt: string; updatedBy: string | null } | null;
}

type AckForm = z.input<typeof acknowledgeInputSchema>;
type ConclusionForm = z.input<typeof conclusionInputSchema>;

function applyError(err: unknown, setError: (name: 'root' | 'note' | 'conclusion', e: { message: string }) => void, field: 'note' | 'conclusion') {
  if (err instanceof ApiError) {
    const msgs = err.fields[field] ?? err.fields.resolution;
    if (msgs) setError(field, { message: msgs.join(' ') });
    else setError('root', { message: err.message });
  } else setError('root', { message: 'Something went wrong; try again.' });
}

/**
 * The trip's lifecycle on its Casefile: acknowledge (a warning needs a note), then resolve with the
 * Casefile's conclusion, which can be drafted and saved before.
 */
export default function TripActions({ tripId, state, level, canAcknowledge, canResolve, resolveRule, conclusion }: Props) {
  const [saved, setSaved] = useState(conclusion);
  const ackSchema = level === 'warning' ? acknowledgeInputSchema.extend({ note: z.string().trim().min(1, 'A warning needs a note: say what you saw and what you are doing about it.') }) : acknowledgeInputSchema;
  const ack = useForm<AckForm>({ resolver: zodResolver(ackSchema), defaultValues: { note: '' } });
  const res = useForm<ConclusionForm>({ resolver: zodResolver(conclusionInputSchema), defaultValues: { conclusion: conclusion?.conclusion ?? '' } });

  const acknowledge = ack.handleSubmit(async (values) => {
    try {
      await http(`/api/trips/${tripId}/acknowledge`, { method: 'POST', json: values });
      location.reload();
    } catch (err) {
      applyError(err, (n, e) => ack.setError(n as 'root' | 'note', e), 'note');
    }
  });

  const resolve = res.handleSubmit(async (values) => {
    try {
      await http(`/api/trips/${tripId}/resolve`, { method: 'POST', json: { conclusion: values.conclusion } });
      location.reload();
    } catch (err) {
      applyError(err, (n, e) => res.setError(n as 'root' | 'conclusion', e), 'conclusion');
    }
  });

  const save = res.handleSubmit(async (values) => {
    try {
      const r = await http<{ conclusion: Props['conclusion'] }>(`/api/trips/${tripId}/conclusion`, { method: 'PUT', json: values });
      setSaved(r.conclusion);
      res.reset({ conclusion: r.conclusion?.conclusion ?? values.conclusion });
    } catch (err) {
      applyError(err, (n, e) => res.setError(n as 'root' | 'conclusion', e), 'conclusion');
    }
  });

  if (state === 'resolved') return <p className="text-sm text-muted">This trip is resolved; its conclusion is above.</p>;
  return (
    <div className="space-y-4">
      {state === 'open' && canAcknowledge && (
        <form onSubmit={acknowledge} className="space-y-2" noValidate aria-label="Acknowledge">
          <label className="label" htmlFor="ack-note">
            Note {level === 'warning' ? '(required for a warning)' : '(optional)'}
          </label>
          <textarea id="ack-note" className="field h-20 py-1" {...ack.register('note')} aria-invalid={ack.formState.errors.note ? 'true' : undefined} />
          {ack.formState.errors.note && <p className="error-text">{ack.formState.errors.note.message}</p>}
          {ack.formState.errors.root && (
            <p role="alert" className="error-text">
              {ack.formState.errors.root.message}
            </p>
          )}
          <button className="btn btn-primary" type="submit" disabled={ack.formState.isSubmitting}>
            Acknowledge
          </button>
        </form>
      )}
      {state === 'open' && !canAcknowledge && <p className="text-xs text-muted">Operators, analysts, engineers and admins acknowledge trips.</p>}
      {canResolve ? (
        <form onSubmit={save} className="space-y-2" noValidate aria-label="Conclusion">
          <label className="label" htmlFor="conclusion">
            Conclusion (required to resolve)
          </label>
          <textarea id="conclusion" className="field h-28 py-1 placeholder:text-muted/60" {...res.register('conclusion')} aria-invalid={res.formState.errors.conclusion ? 'true' : undefined} placeholder="What it was, the evidence for it, and what was done." />
          {res.formState.errors.conclusion && <p className="error-text">{res.formState.errors.conclusion.message}</p>}
          {res.formState.errors.root && (
            <p role="alert" className="error-text">
              {res.formState.errors.root.message}
            </p>
          )}
          {saved && (
            <p className="text-xs text-muted">
              Draft saved {saved.updatedBy ? `by ${saved.updatedBy} ` : ''}
              <span className="num">{formatUtc(saved.updatedAt)} UTC</span>
            </p>
          )}
          <div className="flex flex-wrap gap-2">
            <button className="btn" type="submit" disabled={res.formState.isSubmitting}>
              Save conclusion
            </button>
            <button className="btn btn-primary" type="button" onClick={resolve} disabled={res.formState.isSubmitting || state !== 'acknowledged'}>
              Resolve
            </button>
          </div>
          {state === 'open' && <p className="text-xs text-muted">Acknowledge the trip before resolving it; the conclusion can be drafted now.</p>}
        </form>
      ) : (
        <p className="text-xs text-muted">You may not resolve this trip. {resolveRule}</p>
      )}
    </div>
  );
}
