import { useEffect, useRef } from 'react';
import type { z } from 'zod';
import { useFieldArray, useForm, useWatch, type Control, type FieldErrors, type Path, type Resolver, type UseFormRegister } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { useMutation } from '@tanstack/react-query';
import { ApiError } from '../../lib/http';
import { limitSetInputSchema, loopProblems, type LimitRuleInput, type LimitSetInput } from '../../lib/limits/limit-set.schema';
import { QUANTITIES, quantityInfo } from '../../lib/limits/quantities';
import { saveDraft, type LimitSetView } from './limit-bench.queries';

type FormIn = z.input<typeof limitSetInputSchema>;
type RuleErrors = FieldErrors<LimitRuleInput>;

/** The level fields, from the lowest level to the highest, as an engineer reads a limit. */
const LEVELS = [
  ['warningLow', 'Warning low', 'warning'],
  ['cautionLow', 'Caution low', 'caution'],
  ['clearLow', 'Clear low', 'clear'],
  ['clearHigh', 'Clear high', 'clear'],
  ['cautionHigh', 'Caution high', 'caution'],
  ['warningHigh', 'Warning high', 'warning'],
] as const;

const NEW_RULE: LimitRuleInput = { quantity: 'effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: null, warningLow: null, clearHigh: null, clearLow: null, persistence: 3, rationale: '' };

const toNumberOrNull = (v: unknown): number | null => {
  if (v === null || v === undefined) return null;
  if (typeof v === 'number') return v;
  const s = String(v).trim();
  return s === '' ? null : Number(s);
};

/** Server field keys ("rules[2].cautionHigh") as form paths ("rules.2.cautionHigh"). */
export const formPathOf = (key: string) => key.replace(/\[(\d+)\]/g, '.$1');

/** The shared schema, then the loops of this spacecraft (loopProblems), each error on its field. */
function benchResolver(loopIds: readonly number[]): Resolver<FormIn, unknown, LimitSetInput> {
  const base = zodResolver(limitSetInputSchema) as Resolver<FormIn, unknown, LimitSetInput>;
  return async (values, context, options) => {
    const r = await base(values, context, options);
    if (Object.keys(r.errors).length) return r;
    const problems = loopProblems(r.values as LimitSetInput, loopIds);
    if (!Object.keys(problems).length) return r;
    const rules: Record<number, { loopId: { type: string; message: string } }> = {};
    for (const [key, messages] of Object.entries(problems)) {
      const i = Number(/rules\[(\d+)\]/.exec(key)?.[1]);
      rules[i] = { loopId: { type: 'loop', message: messages.join(' ') } };
    }
    return { values: {}, errors: { rules } as unknown as FieldErrors<FormIn> };
  };
}

function FieldError({ id, message }: { id: string; message: string | undefined }) {
  if (!message) return null;
  return (
    <p id={id} className="error-text mt-0.5 leading-tight">
      {message}
    </p>
  );
}

function RuleRow({
  index,
  control,
  register,
  errors,
  loopIds,
  readOnly,
  onRemove,
}: {
  index: number;
  control: Control<FormIn, unknown, LimitSetInput>;
  register: UseFormRegister<FormIn>;
  errors: RuleErrors | undefined;
  loopIds: readonly number[];
  readOnly: boolean;
  onRemove: () => void;
}) {
  const n = index + 1;
  const quantity = useWatch({ control, name: `rules.${index}.quantity` });
  const info = quantityInfo(quantity);
  const id = (f: string) => `rule-${index}-${f}`;
  const described = (f: keyof LimitRuleInput) => (errors?.[f] ? { 'aria-invalid': true as const, 'aria-describedby': id(`${f}-error`) } : {});
  return (
    <li className="rounded border border-rule/70 p-2" aria-label={`Limit ${n}`}>
      <div className="grid grid-cols-2 gap-2 md:grid-cols-6 xl:grid-cols-[minmax(12rem,2fr)_6.5rem_repeat(6,minmax(4rem,1fr))_4.75rem_auto]">
        <div className="col-span-2 md:col-span-3 xl:col-span-1">
          <label className="label" htmlFor={id('quantity')}>
            Quantity{info?.unit ? <span className="unit"> · levels in {info.unit}</span> : null}
          </label>
          <select id={id('quantity')} className="field" disabled={readOnly} aria-label={`Limit ${n} quantity`} {...described('quantity')} {...register(`rules.${index}.quantity`)}>
            {!info && <option value={quantity}>{quantity} (unknown)</option>}
            {QUANTITIES.map((q) => (
              <option key={q.key} value={q.key}>
                {q.label}
                {q.unit ? ` (${q.unit})` : ''}
              </option>
            ))}
          </select>
          <FieldError id={id('quantity-error')} message={errors?.quantity?.message} />
        </div>
        <div>
          <label className="label" htmlFor={id('loopId')}>
            Loop
          </label>
          <select
            id={id('loopId')}
            className="field"
            disabled={readOnly}
            aria-label={`Limit ${n} loop`}
            {...described('loopId')}
            {...register(`rules.${index}.loopId`, { setValueAs: (v: unknown) => (v === '' || v === null || v === undefined ? null : Number(v)) })}
          >
            <option value="">{info?.scope === 'body' ? 'Whole spacecraft' : 'All loops'}</option>
            {info?.scope !== 'body' &&
              loopIds.map((l) => (
                <option key={l} value={l}>
                  L{l}
                </option>
              ))}
          </select>
          <FieldError id={id('loopId-error')} message={errors?.loopId?.message} />
        </div>
        {LEVELS.map(([f, label, kind]) => (
          <div key={f}>
            <label className="label truncate" htmlFor={id(f)} title={info?.unit ? `${label} (${info.unit})` : label}>
              <span className={kind === 'warning' ? 'text-warning' : kind === 'caution' ? 'text-caution' : ''}>{label}</span>
            </label>
            <input
              id={id(f)}
              className="field num text-right"
              inputMode="decimal"
              autoComplete="off"
              readOnly={readOnly}
              aria-label={`Limit ${n} ${label.toLowerCase()}`}
              {...described(f)}
              {...register(`rules.${index}.${f}`, { setValueAs: toNumberOrNull })}
            />
            <FieldError id={id(`${f}-error`)} message={errors?.[f]?.message} />
          </div>
        ))}
        <div>
          <label className="label truncate" htmlFor={id('persistence')} title="Persistence, consecutive points">
            Persistence
          </label>
          <input
            id={id('persistence')}
            className="field num text-right"
            inputMode="numeric"
            autoComplete="off"
            readOnly={readOnly}
            aria-label={`Limit ${n} persistence`}
            {...described('persistence')}
            {...register(`rules.${index}.persistence`, { setValueAs: toNumberOrNull })}
          />
          <FieldError id={id('persistence-error')} message={errors?.persistence?.message} />
        </div>
        <div className="flex items-start pt-5">
          {!readOnly && (
            <button type="button" className="btn h-8 px-2 text-xs" onClick={onRemove} aria-label={`Remove limit ${n}`}>
              Remove
            </button>
          )}
        </div>
      </div>
      <div className="mt-2">
        <label className="sr-only" htmlFor={id('rationale')}>
          Limit {n} rationale
        </label>
        <input
          id={id('rationale')}
          className="field h-7 text-xs"
          placeholder="Where the levels come from (a flight rule, a datasheet, a test)"
          readOnly={readOnly}
          {...described('rationale')}
          {...register(`rules.${index}.rationale`)}
        />
        <FieldError id={id('rationale-error')} message={errors?.rationale?.message} />
      </div>
    </li>
  );
}

const formOf = (set: LimitSetView): FormIn => ({ name: set.name, notes: set.notes, rules: set.rules.map((r) => ({ ...r })) });

/** The limits of a set as a form: a draft's author edits them; everyone else reads them. */
export function RulesForm({
  set,
  loopIds,
  editable,
  onSaved,
  onDirtyChange,
}: {
  set: LimitSetView;
  loopIds: readonly number[];
  editable: boolean;
  onSaved: (set: LimitSetView) => void;
  onDirtyChange: (dirty: boolean) => void;
}) {
  const form = useForm<FormIn, unknown, LimitSetInput>({ resolver: benchResolver(loopIds), defaultValues: formOf(set), mode: 'onSubmit', reValidateMode: 'onChange' });
  const { control, register, handleSubmit, formState, reset, setError } = form;
  const rules = useFieldArray({ control, name: 'rules' });
  // Reset only when the stored limits change, not on every refetch of the set (a finished backtest refetches it).
  const stored = JSON.stringify([set.id, set.status, set.name, set.notes, set.rules]);
  const latest = useRef(set);
  latest.current = set;
  useEffect(() => {
    reset(formOf(latest.current));
  }, [stored, reset]);
  useEffect(() => onDirtyChange(formState.isDirty), [formState.isDirty, onDirtyChange]);
  const save = useMutation({
    mutationFn: (input: LimitSetInput) => saveDraft(set.id, input),
    onSuccess: (r) => onSaved(r.set),
    onError: (err) => {
      if (!(err instanceof ApiError)) return;
      for (const [key, messages] of Object.entries(err.fields)) {
        if (key === 'name' || key === 'notes' || key.startsWith('rules')) setError(formPathOf(key) as Path<FormIn>, { type: 'server', message: messages.join(' ') });
      }
    },
  });
  const errors = formState.errors;
  const readOnly = !editable;
  const err = save.error;
  const unplaced = err instanceof ApiError ? Object.entries(err.fields).filter(([k]) => !(k === 'name' || k === 'notes' || k.startsWith('rules'))) : [];
  const count = errors.rules ? (Array.isArray(errors.rules) ? errors.rules.filter(Boolean).length : 0) : 0;

  return (
    <form onSubmit={handleSubmit((v) => save.mutate(v))} noValidate aria-label={`Limits of v${set.version}`} className="space-y-3">
      <div className="grid gap-3 md:grid-cols-[1fr_2fr]">
        <div>
          <label className="label" htmlFor="set-name">
            Name
          </label>
          <input id="set-name" className="field" readOnly={readOnly} aria-invalid={errors.name ? true : undefined} {...register('name')} />
          <FieldError id="set-name-error" message={errors.name?.message} />
        </div>
        <div>
          <label className="label" htmlFor="set-notes">
            Notes
          </label>
          <input id="set-notes" className="field" readOnly={readOnly} placeholder="What this version changes, and why" {...register('notes')} />
          <FieldError id="set-notes-error" message={errors.notes?.message} />
        </div>
      </div>
      {rules.fields.length === 0 ? (
        <p className="rounded border border-dashed border-rule p-4 text-muted">
          This set has no limits. {editable ? 'Add a limit below, then save the draft.' : 'Nothing would trip under it.'}
        </p>
      ) : (
        <ol className="space-y-2" aria-label="Limits">
          {rules.fields.map((f, i) => (
            <RuleRow
              key={f.id}
              index={i}
              control={control}
              register={register}
              errors={Array.isArray(errors.rules) ? (errors.rules[i] as RuleErrors | undefined) : undefined}
              loopIds={loopIds}
              readOnly={readOnly}
              onRemove={() => rules.remove(i)}
            />
          ))}
        </ol>
      )}
      {errors.rules?.message && <p className="error-text">{errors.rules.message}</p>}
      {editable && (
        <div className="flex flex-wrap items-center gap-3">
          <button type="button" className="btn" onClick={() => rules.append({ ...NEW_RULE })}>
            Add limit
          </button>
          <button type="submit" className="btn btn-primary" disabled={save.isPending || !formState.isDirty}>
            {save.isPending ? 'Saving…' : 'Save draft'}
          </button>
          <span className="text-xs text-muted" role="status">
            {save.isPending
              ? ''
              : count > 0
                ? `${count} limit${count === 1 ? ' has' : 's have'} errors; each is marked on its field.`
                : formState.isDirty
                  ? 'Unsaved changes: save the draft before a backtest or review.'
                  : save.isSuccess
                    ? 'Draft saved.'
                    : 'Saved.'}
          </span>
        </div>
      )}
      {save.isError && (
        <div role="alert" className="rounded border border-warning/40 bg-warning/10 px-3 py-2">
          <p className="font-medium text-warning">The draft was not saved: {err?.message}</p>
          {err instanceof ApiError && err.status === 409 && <p className="mt-0.5">Reload the page: the set has left the draft state since it was read.</p>}
          {err instanceof ApiError && err.status === 403 && <p className="mt-0.5">Make a draft of your own from the active set instead.</p>}
          {unplaced.map(([k, m]) => (
            <p key={k} className="error-text">
              {k}: {m.join(' ')}
            </p>
          ))}
        </div>
      )}
    </form>
  );
}
