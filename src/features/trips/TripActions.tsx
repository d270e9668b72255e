import { useState } from 'react';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { z } from 'zod';
import { ApiError, http } from '../../lib/http';
import { acknowledgeInputSchema, resolveInputSchema } from '../../lib/trips.schema';

interface Props {
  tripId: number;
  state: 'open' | 'acknowledged' | 'resolved';
  level: 'caution' | 'warning';
  canAcknowledge: boolean;
  canResolve: boolean;
  resolveRule: string;
}

type AckForm = z.input<typeof acknowledgeInputSchema>;
type ResolveForm = z.input<typeof resolveInputSchema>;

/** Acknowledge (a note is required for warnings) and resolve (a conclusion is required). */
export default function TripActions({ tripId, state, level, canAcknowledge, canResolve, resolveRule }: Props) {
  const [current, setCurrent] = useState(state);
  const ackSchema = level === 'warning' ? acknowledgeInputSchema.extend({ note: z.string().trim().min(1, 'A warning needs a note: say what you saw and what you are doing about it.') }) : acknowledgeInputSchema;
  const ack = useForm<AckForm>({ resolver: zodResolver(ackSchema), defaultValues: { note: '' } });
  const res = useForm<ResolveForm>({ resolver: zodResolver(resolveInputSchema), defaultValues: { resolution: '' } });

  const submit = (path: string, form: typeof ack | typeof res, next: Props['state']) => async (values: AckForm | ResolveForm) => {
    try {
      await http(`/api/trips/${tripId}/${path}`, { method: 'POST', json: values });
      setCurrent(next);
      location.reload();
    } catch (err) {
      if (err instanceof ApiError) {
        for (const [field, msgs] of Object.entries(err.fields)) form.setError(field as never, { message: msgs.join(' ') });
        if (!Object.keys(err.fields).length) form.setError('root', { message: err.message });
      } else form.setError('root', { message: 'Something went wrong; try again.' });
    }
  };

  if (current === 'resolved') return <p className="text-sm text-muted">This trip is resolved.</p>;
  return (
    <div className="space-y-4">
      {current === 'open' && canAcknowledge && (
        <form onSubmit={ack.handleSubmit(submit('acknowledge', ack, 'acknowledged'))} className="space-y-2" noValidate>
          <label className="label" htmlFor="ack-note">
            Note {level === 'warning' ? '(required for a warning)' : '(optional)'}
          </label>
          <textarea id="ack-note" className="field h-20 py-1" {...ack.register('note')} aria-invalid={ack.formState.errors.note ? 'true' : undefined} />
          {ack.formState.errors.note && <p className="error-text">{ack.formState.errors.note.message}</p>}
          {ack.formState.errors.root && <p role="alert" className="error-text">{ack.formState.errors.root.message}</p>}
          <button className="btn btn-primary" type="submit" disabled={ack.formState.isSubmitting}>
            Acknowledge
          </button>
        </form>
      )}
      {current === 'acknowledged' && canResolve && (
        <form onSubmit={res.handleSubmit(submit('resolve', res, 'resolved'))} className="space-y-2" noValidate>
          <label className="label" htmlFor="resolution">
            Conclusion (required)
          </label>
          <textarea id="resolution" className="field h-24 py-1" {...res.register('resolution')} aria-invalid={res.formState.errors.resolution ? 'true' : undefined} />
          {res.formState.errors.resolution && <p className="error-text">{res.formState.errors.resolution.message}</p>}
          {res.formState.errors.root && <p role="alert" className="error-text">{res.formState.errors.root.message}</p>}
          <button className="btn btn-primary" type="submit" disabled={res.formState.isSubmitting}>
            Resolve
          </button>
        </form>
      )}
      {current === 'acknowledged' && !canResolve && <p className="text-xs text-muted">{resolveRule}</p>}
      {current === 'open' && !canAcknowledge && <p className="text-xs text-muted">Operators, analysts, engineers and admins acknowledge trips.</p>}
    </div>
  );
}
