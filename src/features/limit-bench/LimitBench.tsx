import { useCallback, useState } from 'react';
import { QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { ApiError } from '../../lib/http';
import { formatUtc, formatValue } from '../../lib/format';
import type { LimitRuleInput } from '../../lib/limits/limit-set.schema';
import { quantityInfo } from '../../lib/limits/quantities';
import {
  approveSet,
  createDraft,
  limitSetDiffQuery,
  limitSetQuery,
  limitSetsQuery,
  returnSet,
  submitSet,
  type LimitSetSummary,
  type LimitSetView,
} from './limit-bench.queries';
import type { Handover } from '../../lib/server/trip-engine';
import { RulesForm } from './RulesForm';
import { BacktestPanel } from './BacktestPanel';

interface BenchUser {
  id: string;
  name: string;
  roles: string[];
}

interface Props {
  spacecraft: { key: string; name: string };
  loopIds: number[];
  user: BenchUser;
  initialSets: LimitSetSummary[];
  initialSet: LimitSetView | null;
}

const STATUS_STYLE: Record<LimitSetSummary['status'], { color: string; icon: string }> = {
  draft: { color: '#5B7C99', icon: '✎' },
  'in review': { color: '#B8734A', icon: '◔' },
  active: { color: '#2F8F6B', icon: '●' },
  retired: { color: '#8A8F98', icon: '○' },
};

/** A limit set's status as icon + word. */
function SetStatus({ status }: { status: LimitSetSummary['status'] }) {
  const s = STATUS_STYLE[status];
  return (
    <span className="inline-flex items-center gap-1 rounded-sm px-1.5 text-xs font-medium" style={{ color: s.color, backgroundColor: `${s.color}1a` }}>
      <span aria-hidden="true">{s.icon}</span>
      <span>{status}</span>
    </span>
  );
}

const FIELD_LABEL: Record<string, string> = {
  cautionLow: 'caution low',
  warningLow: 'warning low',
  cautionHigh: 'caution high',
  warningHigh: 'warning high',
  clearLow: 'clear low',
  clearHigh: 'clear high',
  persistence: 'persistence',
  rationale: 'rationale',
};

const loopText = (quantity: string, loopId: number | null) => (loopId !== null ? `L${loopId}` : quantityInfo(quantity)?.scope === 'body' ? 'whole spacecraft' : 'all loops');

/** "caution ≤ 0.55 · warning ≤ 0.45 · clear ≥ 0.6 · 3 points" */
function levelsText(r: LimitRuleInput): string {
  const u = quantityInfo(r.quantity)?.unit;
  const v = (x: number) => `${formatValue(x)}${u ? ` ${u}` : ''}`;
  const parts: string[] = [];
  if (r.cautionLow !== null) parts.push(`caution ≤ ${v(r.cautionLow)}`);
  if (r.warningLow !== null) parts.push(`warning ≤ ${v(r.warningLow)}`);
  if (r.cautionHigh !== null) parts.push(`caution ≥ ${v(r.cautionHigh)}`);
  if (r.warningHigh !== null) parts.push(`warning ≥ ${v(r.warningHigh)}`);
  if (r.clearLow !== null) parts.push(`clear > ${v(r.clearLow)}`);
  if (r.clearHigh !== null) parts.push(`clear < ${v(r.clearHigh)}`);
  parts.push(`${r.persistence} point${r.persistence === 1 ? '' : 's'}`);
  return parts.join(' · ');
}

const fieldValue = (v: number | string | null) => (v === null ? '—' : typeof v === 'number' ? formatValue(v) : v === '' ? '(empty)' : `“${v}”`);

function DiffPanel({ set }: { set: LimitSetView }) {
  const q = useQuery(limitSetDiffQuery(set.id));
  const d = q.data;
  return (
    <section className="panel space-y-2 p-4" aria-labelledby="diff-h">
      <h2 id="diff-h">{d?.previous ? `Changes against v${d.previous.version} (${d.previous.status})` : 'Changes'}</h2>
      {q.isPending && <p className="text-muted">Comparing…</p>}
      {q.isError && <p className="error-text">The comparison could not be loaded: {q.error.message}</p>}
      {d && !d.previous && <p className="text-muted">No earlier version was ever in force: every limit of v{set.version} is new.</p>}
      {d && (
        <>
          <p className="text-xs text-muted">
            {d.diff.added.length} added · {d.diff.removed.length} removed · {d.diff.changed.length} changed · {d.diff.unchanged} unchanged
          </p>
          <ul className="space-y-1 text-sm" aria-label="Differences">
            {d.diff.added.map((a) => (
              <li key={`a-${a.key}`}>
                <strong className="text-nominal">＋ Added</strong> {a.label} <span className="text-muted">({loopText(a.quantity, a.loopId)})</span>: <span className="num">{levelsText(a.rule)}</span>
              </li>
            ))}
            {d.diff.removed.map((a) => (
              <li key={`r-${a.key}`}>
                <strong className="text-warning">－ Removed</strong> {a.label} <span className="text-muted">({loopText(a.quantity, a.loopId)})</span>: <span className="num line-through">{levelsText(a.rule)}</span>
              </li>
            ))}
            {d.diff.changed.map((c) => (
              <li key={`c-${c.key}`}>
                <strong className="text-copper">∆ Changed</strong> {c.label} <span className="text-muted">({loopText(c.quantity, c.loopId)})</span>:{' '}
                {c.fields.map((f, i) => (
                  <span key={f.field} className="num">
                    {i > 0 && '; '}
                    {FIELD_LABEL[f.field]} {fieldValue(f.before)} → <strong>{fieldValue(f.after)}</strong>
                  </span>
                ))}
              </li>
            ))}
          </ul>
        </>
      )}
    </section>
  );
}

function ReviewPanel({ set, user, unsaved, onChanged }: { set: LimitSetView; user: BenchUser; unsaved: boolean; onChanged: (s: LimitSetView) => void }) {
  const [comment, setComment] = useState('');
  const [commentError, setCommentError] = useState<string | null>(null);
  const [handover, setHandover] = useState<Handover | null>(null);
  const act = useMutation({
    mutationFn: async (what: 'submit' | 'approve' | 'return'): Promise<{ set: LimitSetView; handover: Handover | null }> =>
      what === 'approve' ? approveSet(set.id, comment) : { set: (await (what === 'submit' ? submitSet : returnSet)(set.id, comment)).set, handover: null },
    onSuccess: (r) => {
      setComment('');
      setHandover(r.handover);
      onChanged(r.set);
    },
    onError: (err) => {
      if (err instanceof ApiError && err.fields.comment) setCommentError(err.fields.comment.join(' '));
    },
  });
  const isAuthor = set.createdBy === user.id;
  const err = act.error instanceof ApiError ? act.error : null;
  const doReturn = () => {
    if (!comment.trim()) {
      setCommentError('Say what the author should change.');
      return;
    }
    act.mutate('return');
  };
  const commentBox = (label: string, required: boolean) => (
    <div>
      <label className="label" htmlFor="review-comment">
        {label}
      </label>
      <textarea
        id="review-comment"
        rows={3}
        className="field h-auto py-1.5"
        value={comment}
        aria-invalid={commentError ? true : undefined}
        aria-describedby={commentError ? 'review-comment-error' : undefined}
        aria-required={required || undefined}
        onChange={(e) => {
          setComment(e.target.value);
          setCommentError(null);
        }}
      />
      {commentError && (
        <p id="review-comment-error" className="error-text mt-0.5">
          {commentError}
        </p>
      )}
    </div>
  );

  return (
    <section className="panel space-y-3 p-4" aria-labelledby="review-h">
      <h2 id="review-h">Review</h2>
      {set.status === 'draft' && isAuthor && (
        <div className="space-y-2">
          {commentBox('Note to the reviewer (optional)', false)}
          <button type="button" className="btn btn-primary" disabled={act.isPending || unsaved} onClick={() => act.mutate('submit')}>
            Submit for review
          </button>
          <p className="text-xs text-muted">{unsaved ? 'Save the draft first.' : 'A different engineer or an admin approves it; you cannot approve your own draft.'}</p>
        </div>
      )}
      {set.status === 'draft' && !isAuthor && <p className="text-muted">Draft by {set.createdByName ?? 'someone else'}; only its author edits and submits it.</p>}
      {set.status === 'in review' && isAuthor && <p className="text-muted">Waiting for a different engineer or an admin to approve it or return it with comments. You cannot approve your own draft.</p>}
      {set.status === 'in review' && !isAuthor && (
        <div className="space-y-2">
          {commentBox('Comments (needed to return it)', false)}
          <div className="flex flex-wrap gap-2">
            <button type="button" className="btn btn-primary" disabled={act.isPending} onClick={() => act.mutate('approve')}>
              Approve and activate
            </button>
            <button type="button" className="btn" disabled={act.isPending} onClick={doReturn}>
              Return with comments
            </button>
          </div>
          <p className="text-xs text-muted">
            Approving makes v{set.version} the active set of this spacecraft at once and retires the one in force. Limits on a quantity both sets watch carry on from where the retired set stopped; a
            quantity new to this set is judged over the last 24 h. Trips of the retired set whose condition persists are closed at the handover with a note and stay open for acknowledgement.
          </p>
        </div>
      )}
      {set.status === 'active' && <p className="text-muted">In force since {formatUtc(set.activatedAt)} UTC; the scheduler evaluates these limits. To change them, make a new draft.</p>}
      {set.status === 'active' && handover && (
        <p role="status" className="text-sm" data-testid="handover">
          Handover done: {handover.seeded.length} limit {handover.seeded.length === 1 ? 'check carries' : 'checks carry'} on from the retired set;{' '}
          {handover.closed.length === 0 ? (
            'no trip of the retired set was live.'
          ) : (
            <>
              {handover.closed.length === 1 ? 'trip' : 'trips'}{' '}
              {handover.closed.map((id, i) => (
                <span key={id}>
                  {i > 0 ? ', ' : ''}
                  <a className="link" href={`/trips/${id}`}>
                    #{id}
                  </a>
                </span>
              ))}{' '}
              of the retired set {handover.closed.length === 1 ? 'was' : 'were'} live and {handover.closed.length === 1 ? 'is' : 'are'} now closed at the handover.
            </>
          )}
        </p>
      )}
      {set.status === 'retired' && <p className="text-muted">Retired {formatUtc(set.retiredAt)} UTC.</p>}
      {err && !err.fields.comment && (
        <p role="alert" className="rounded border border-warning/40 bg-warning/10 px-3 py-2 text-sm">
          <span className="font-medium text-warning">{err.message}</span>
        </p>
      )}
      <div>
        <h3 className="label">Trail</h3>
        {set.reviews.length === 0 ? (
          <p className="text-xs text-muted">Not yet submitted.</p>
        ) : (
          <ol className="space-y-1.5 text-sm" aria-label="Review trail">
            {set.reviews.map((r) => (
              <li key={r.id}>
                <strong>{r.action === 'submitted' ? 'Submitted' : r.action === 'approved' ? 'Approved' : 'Returned'}</strong>{' '}
                <span className="text-muted">
                  by {r.actorName ?? '—'}, <span className="num">{formatUtc(r.at)}</span> UTC
                </span>
                {r.comment && <p className="ml-3 whitespace-pre-wrap border-l-2 border-rule pl-2">{r.comment}</p>}
              </li>
            ))}
          </ol>
        )}
      </div>
    </section>
  );
}

function Bench({ spacecraft, loopIds, user, initialSets, initialSet }: Props) {
  const qc = useQueryClient();
  const [selected, setSelected] = useState<number | null>(initialSet?.id ?? null);
  const [unsaved, setUnsaved] = useState(false);
  const sets = useQuery({ ...limitSetsQuery(spacecraft.key), initialData: { spacecraft: spacecraft.key, sets: initialSets } });
  const setQ = useQuery({ ...limitSetQuery(selected ?? 0), enabled: selected !== null, initialData: initialSet && initialSet.id === selected ? { set: initialSet } : undefined });
  const set = selected !== null ? setQ.data?.set : undefined;
  const active = sets.data.sets.find((s) => s.status === 'active');
  const isEngineer = user.roles.includes('engineer') || user.roles.includes('admin');

  const select = useCallback((id: number) => {
    setSelected(id);
    setUnsaved(false);
    const u = new URL(location.href);
    u.searchParams.set('set', String(id));
    history.replaceState(null, '', u);
  }, []);
  const refresh = useCallback(
    async (s: LimitSetView) => {
      qc.setQueryData(limitSetQuery(s.id).queryKey, { set: s });
      // Approval changes another set too (the one it retires): refetch every set read so far.
      await Promise.all([qc.invalidateQueries({ queryKey: ['limit-sets', spacecraft.key] }), qc.invalidateQueries({ queryKey: ['limit-set'] })]);
    },
    [qc, spacecraft.key],
  );
  const draft = useMutation({
    mutationFn: () => createDraft(spacecraft.key),
    onSuccess: async (r) => {
      await refresh(r.set);
      select(r.set.id);
    },
  });
  const onDirty = useCallback((d: boolean) => setUnsaved(d), []);

  return (
    <div className="grid gap-4 lg:grid-cols-[16rem_1fr]">
      <aside className="space-y-3" aria-label="Versions">
        {isEngineer && (
          <div className="panel space-y-2 p-3">
            <button type="button" className="btn btn-primary w-full justify-center" disabled={draft.isPending} onClick={() => draft.mutate()}>
              {draft.isPending ? 'Copying…' : active ? `New draft from v${active.version}` : 'New draft'}
            </button>
            <p className="text-xs text-muted">{active ? `A copy of the active set v${active.version} to edit.` : 'The spacecraft has no active set; the draft starts from the demo defaults.'}</p>
            {draft.isError && (
              <p role="alert" className="error-text">
                {draft.error.message}
              </p>
            )}
          </div>
        )}
        <nav className="panel" aria-label="Limit set versions">
          <h2 className="border-b border-rule px-3 py-2 text-sm">Versions</h2>
          {sets.data.sets.length === 0 ? (
            <p className="p-3 text-xs text-muted">No limit set yet. Make a draft to start.</p>
          ) : (
            <ul>
              {sets.data.sets.map((s) => (
                <li key={s.id}>
                  <button
                    type="button"
                    onClick={() => select(s.id)}
                    aria-current={s.id === selected ? 'true' : undefined}
                    className={`block w-full border-b border-rule/60 px-3 py-2 text-left hover:bg-paper ${s.id === selected ? 'bg-paper' : ''}`}
                  >
                    <span className="flex items-center justify-between gap-2">
                      <span className="num font-semibold">v{s.version}</span>
                      <SetStatus status={s.status} />
                    </span>
                    <span className="block truncate text-xs text-muted">
                      {s.name} · {s.ruleCount} limit{s.ruleCount === 1 ? '' : 's'} · {s.createdByName ?? 'seeded'}
                    </span>
                  </button>
                </li>
              ))}
            </ul>
          )}
        </nav>
      </aside>

      <div className="min-w-0 space-y-4">
        {selected === null && <p className="panel p-6 text-muted">Choose a version on the left{isEngineer ? ', or make a new draft from the active set' : ''}.</p>}
        {selected !== null && setQ.isError && (
          <p role="alert" className="panel p-4 text-warning">
            Limit set {selected} could not be loaded: {setQ.error.message}
          </p>
        )}
        {set && (
          <>
            <section className="panel space-y-3 p-4" aria-label={`Limit set v${set.version}`}>
              <div className="flex flex-wrap items-center gap-3">
                <h2 className="text-lg">
                  v{set.version} <span className="font-normal text-muted">· {set.name}</span>
                </h2>
                <SetStatus status={set.status} />
                <span className="text-xs text-muted">
                  by {set.createdByName ?? 'the seed'}, <span className="num">{formatUtc(set.createdAt)}</span> UTC
                </span>
              </div>
              <RulesForm set={set} loopIds={loopIds} editable={set.status === 'draft' && set.createdBy === user.id} onSaved={(s) => void refresh(s)} onDirtyChange={onDirty} />
            </section>
            <div className="grid gap-4 xl:grid-cols-2">
              <ReviewPanel key={`review-${set.id}`} set={set} user={user} unsaved={unsaved} onChanged={(s) => void refresh(s)} />
              <DiffPanel key={`diff-${set.id}-${set.rulesDigest}`} set={set} />
            </div>
            <BacktestPanel set={set} canRun={isEngineer} unsaved={unsaved} />
          </>
        )}
      </div>
    </div>
  );
}

/** The Limit bench island: versions of a spacecraft's limit set, the draft editor, review, differences and backtests. */
export default function LimitBench(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <Bench {...props} />
    </QueryClientProvider>
  );
}
