import { ConfirmStrip } from '../../components/ConfirmStrip';
import { adviceFor } from '../../lib/advice';
import { useState, type ReactNode } from 'react';
import { QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { getQueryClient } from '../../lib/query-client';
import { ApiError } from '../../lib/http';
import { utcText } from '../../lib/format';
import { addShift, removeShift, rosterQuery, type RosterView } from './roster.queries';
import { createOnCallShiftInputSchema, type CreateOnCallShiftInput } from './roster.schema';

type Shift = RosterView['shifts'][number];
const FIELDS = ['userId', 'startsAt', 'endsAt'] as const;

const advice = (err: unknown) => adviceFor(err, { forbidden: 'Only operators and admins edit the roster.', notFound: 'Reload the page: the roster has changed since it was read.' });

/** "YYYY-MM-DD HH:MM" in UTC: 24-hour and the same whatever the browser's locale. */
function utcField(d: Date): string {
  return d.toISOString().slice(0, 16).replace('T', ' ');
}

function statusOf(s: Shift, now: number): 'on call' | 'upcoming' | 'ended' {
  if (Date.parse(s.endsAt) <= now) return 'ended';
  return Date.parse(s.startsAt) <= now ? 'on call' : 'upcoming';
}

function ShiftRow({ spacecraft, shift, canEdit, now }: { spacecraft: string; shift: Shift; canEdit: boolean; now: number }) {
  const qc = useQueryClient();
  const [confirming, setConfirming] = useState(false);
  const remove = useMutation({
    mutationFn: () => removeShift(spacecraft, shift.id),
    onSuccess: () => {
      setConfirming(false);
      return qc.invalidateQueries({ queryKey: ['roster', spacecraft] });
    },
  });
  const status = statusOf(shift, now);
  const label = `${shift.userName} ${utcText(shift.startsAt).slice(0, 16)} to ${utcText(shift.endsAt).slice(0, 16)}`;
  return (
    <>
      <tr className={status === 'ended' ? 'text-muted' : ''}>
        <td className="font-medium">
          {shift.userName} <span className="text-xs font-normal text-muted">{shift.userEmail}</span>
        </td>
        <td className="num whitespace-nowrap">{utcText(shift.startsAt).slice(0, 16)}</td>
        <td className="num whitespace-nowrap">{utcText(shift.endsAt).slice(0, 16)}</td>
        <td>{status === 'on call' ? <span className="font-medium text-nominal">● on call now</span> : status}</td>
        <td className="text-muted">{shift.createdByName ?? '—'}</td>
        {canEdit && (
          <td className="whitespace-nowrap text-right">
            {!confirming && (
              <button type="button" className="btn h-7 px-2 text-xs" onClick={() => setConfirming(true)} aria-label={`Remove ${label}`}>
                Remove
              </button>
            )}
          </td>
        )}
      </tr>
      {confirming && (
        <tr>
          <td colSpan={6} className="h-auto bg-warning/10 px-3 py-2">
            <ConfirmStrip
              label={`Confirm removing ${label}`}
              confirm="Yes, remove"
              pendingText="Removing…"
              keep="Keep it"
              pending={remove.isPending}
              onConfirm={() => remove.mutate()}
              onKeep={() => setConfirming(false)}
              failure={remove.isError ? <>Not removed: {remove.error.message} {advice(remove.error)}</> : undefined}
            >
              Take {shift.userName} off call for {utcText(shift.startsAt).slice(0, 16)} – {utcText(shift.endsAt).slice(0, 16)} UTC?
            </ConfirmStrip>
          </td>
        </tr>
      )}
    </>
  );
}

function AddShiftForm({ view }: { view: RosterView }) {
  const qc = useQueryClient();
  const key = view.spacecraft.key;
  const start = new Date(Math.ceil(Date.now() / 3_600_000) * 3_600_000);
  const form = useForm<CreateOnCallShiftInput>({
    resolver: zodResolver(createOnCallShiftInputSchema),
    defaultValues: { userId: '', startsAt: utcField(start), endsAt: utcField(new Date(start.getTime() + 12 * 3_600_000)) },
  });
  const [added, setAdded] = useState<string | null>(null);
  const add = useMutation({
    mutationFn: (v: CreateOnCallShiftInput) => addShift(key, v),
    onSuccess: async (_r, v) => {
      const who = view.candidates.find((c) => c.id === v.userId)?.name ?? 'The person';
      setAdded(`${who} is on the roster ${v.startsAt.replace('T', ' ')} – ${v.endsAt.replace('T', ' ')} UTC.`);
      form.reset({ ...v, userId: '' });
      await qc.invalidateQueries({ queryKey: ['roster', key] });
    },
    onError: (err) => {
      if (!(err instanceof ApiError)) return;
      for (const f of FIELDS) if (err.fields[f]) form.setError(f, { message: err.fields[f]!.join(' ') });
    },
  });
  const errors = form.formState.errors;
  const fieldErrorShown = add.error instanceof ApiError && FIELDS.some((f) => (add.error as ApiError).fields[f]);
  const field = (name: (typeof FIELDS)[number], label: string, input: ReactNode) => (
    <div className={name === 'userId' ? 'w-64' : 'w-52'}>
      <label className="label" htmlFor={`shift-${name}`}>
        {label}
      </label>
      {input}
      {errors[name]?.message && (
        <p id={`shift-${name}-error`} className="error-text mt-1">
          {errors[name]?.message}
        </p>
      )}
    </div>
  );
  const aria = (name: (typeof FIELDS)[number]) => ({
    id: `shift-${name}`,
    'aria-invalid': errors[name] ? ('true' as const) : undefined,
    'aria-describedby': errors[name] ? `shift-${name}-error` : undefined,
  });
  return (
    <form
      onSubmit={form.handleSubmit((v) => {
        setAdded(null);
        add.mutate(v);
      })}
      noValidate
      aria-label={`Add a shift to the roster of ${key}`}
      className="space-y-2 border-t border-rule px-4 py-3"
    >
      <h2 className="text-sm">Add a shift</h2>
      <div className="flex flex-wrap items-start gap-3">
        {field(
          'userId',
          'Who',
          <select className="field" {...aria('userId')} {...form.register('userId')}>
            <option value="">Choose a person…</option>
            {view.candidates.map((c) => (
              <option key={c.id} value={c.id}>
                {c.name} ({c.roles.join(', ')})
              </option>
            ))}
          </select>,
        )}
        {field('startsAt', 'From (UTC)', <input type="text" inputMode="numeric" placeholder="YYYY-MM-DD HH:MM" className="field num" {...aria('startsAt')} {...form.register('startsAt')} />)}
        {field('endsAt', 'To (UTC)', <input type="text" inputMode="numeric" placeholder="YYYY-MM-DD HH:MM" className="field num" {...aria('endsAt')} {...form.register('endsAt')} />)}
        <button type="submit" className="btn btn-primary mt-5" disabled={add.isPending}>
          {add.isPending ? 'Adding…' : 'Add to roster'}
        </button>
      </div>
      {added && (
        <p role="status" className="text-xs text-nominal">
          {added}
        </p>
      )}
      {add.isError && !fieldErrorShown && (
        <p role="alert" className="error-text">
          The shift was not added: {add.error.message} {advice(add.error)}
        </p>
      )}
    </form>
  );
}

function RosterPanel({ initial }: { initial: RosterView }) {
  const q = useQuery({ ...rosterQuery(initial.spacecraft.key), initialData: initial });
  const view = q.data;
  const now = Date.now();
  const key = view.spacecraft.key;
  return (
    <section className="panel" aria-label={`On-call roster of ${key}`}>
      <header className="border-b border-rule px-4 py-3">
        <p className="text-sm" role="note">
          {view.alertsNow.fallback ? (
            <>
              <span className="font-medium text-copper">Nobody is on call for {key} now.</span> Trips are mailed to every operator instead:{' '}
              {view.alertsNow.emails.join(', ') || 'there is no active operator account, so nobody would be mailed'}.
            </>
          ) : (
            <>
              Trips of {key} are mailed now to <span className="font-medium">{view.alertsNow.emails.join(', ')}</span>.
            </>
          )}
        </p>
      </header>
      {q.isError && (
        <p role="alert" className="error-text px-4 pt-2">
          The roster could not be refreshed: {q.error.message}. {advice(q.error)}
        </p>
      )}
      {view.shifts.length === 0 ? (
        <p className="px-4 py-3 text-muted">
          No shifts for {key} from yesterday on.{' '}
          {view.canEdit ? 'Add one below.' : 'An operator or an admin adds them.'} Until then, trips are mailed to every operator.
        </p>
      ) : (
        <div className="overflow-x-auto">
          <table className="table-compact">
            <thead>
              <tr>
                <th>Who</th>
                <th>From (UTC)</th>
                <th>To (UTC)</th>
                <th>Status</th>
                <th>Added by</th>
                {view.canEdit && (
                  <th className="text-right">
                    <span className="sr-only">Actions</span>
                  </th>
                )}
              </tr>
            </thead>
            <tbody>
              {view.shifts.map((s) => (
                <ShiftRow key={s.id} spacecraft={key} shift={s} canEdit={view.canEdit} now={now} />
              ))}
            </tbody>
          </table>
        </div>
      )}
      {view.canEdit && <AddShiftForm view={view} />}
    </section>
  );
}

/** The on-call roster of one spacecraft: who is mailed when a trip opens, and when. */
export default function Roster({ initial }: { initial: RosterView }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <RosterPanel initial={initial} />
    </QueryClientProvider>
  );
}
