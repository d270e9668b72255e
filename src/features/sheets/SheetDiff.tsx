import type { ReactNode } from 'react';
import { unitOfPath, type IdealKtChange, type NumberChange, type SheetDiff } from '../../lib/sheet-diff';
import type { SheetLoop } from '../../lib/spacecraft-sheet.schema';
import { utcText } from '../../lib/format';

const sig = (v: number) => (Number.isInteger(v) && Math.abs(v) < 1e9 ? String(v) : String(Number(v.toPrecision(6))));
const signed = (v: number, digits = 1) => `${v > 0 ? '+' : v < 0 ? '−' : '±'}${Math.abs(v).toFixed(digits)}`;
const pct = (r: number | null) => (r === null ? '—' : `${signed(r * 100, 2)} %`);

function Unit({ u }: { u: string }) {
  return u ? <span className="unit"> {u}</span> : null;
}

/** The caution shown when a sheet moves a loop's ideal torque constant by more than the warning fraction. */
export function KtShiftWarning({ shifts, fraction }: { shifts: IdealKtChange[]; fraction: number }) {
  if (!shifts.length) return null;
  return (
    <div role="note" aria-label="Ideal torque constant changes" className="rounded border border-caution/50 bg-caution/10 px-3 py-2 text-sm">
      <p className="font-semibold text-caution">
        <span aria-hidden="true">▲ </span>caution · ideal torque constant moves by more than {Math.round(fraction * 100)} %
      </p>
      <ul className="mt-1 space-y-0.5">
        {shifts.map((s) => (
          <li key={s.loopId}>
            L{s.loopId}: <span className="num">{(s.before * 1000).toPrecision(4)}</span> → <span className="num font-medium">{(s.after * 1000).toPrecision(4)}</span>
            <Unit u="mN·m/A" /> (<span className="num">{pct(s.change)}</span>)
          </li>
        ))}
      </ul>
      <p className="mt-1 text-xs text-muted">
        Effectiveness and the torque-constant trips are measured against the ideal constant: check the loop geometry and the pump stations before this sheet takes effect.
      </p>
    </div>
  );
}

function ChangeTable({ caption, rows, unit }: { caption: string; rows: NumberChange[]; unit: string }) {
  return (
    <table className="table-compact w-auto" aria-label={caption}>
      <thead>
        <tr>
          <th>{caption}</th>
          <th className="n">Before</th>
          <th className="n">After</th>
          <th className="n">Change</th>
          <th className="n">Relative</th>
        </tr>
      </thead>
      <tbody>
        {rows.map((r) => (
          <tr key={r.label}>
            <td className="font-mono text-xs">{r.label}</td>
            <td className="n text-muted">{sig(r.before)}</td>
            <td className="n font-medium">{sig(r.after)}</td>
            <td className="n">
              {r.delta > 0 ? '+' : r.delta < 0 ? '−' : ''}
              {sig(Math.abs(r.delta))}
              <Unit u={unit} />
            </td>
            <td className="n">{pct(r.relative)}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}

function leafText(v: string | number | boolean | null, unit: string): ReactNode {
  if (v === null) return <span className="text-muted">absent</span>;
  if (typeof v === 'number')
    return (
      <>
        <span className="num">{sig(v)}</span>
        <Unit u={unit} />
      </>
    );
  return <span className="font-mono text-xs">{String(v)}</span>;
}

function loopLine(l: SheetLoop): string {
  const shape = l.shape.kind === 'circle' ? `circle R ${sig(l.shape.radius_m)} m` : `rounded rectangle ${sig(l.shape.width_m)} × ${sig(l.shape.height_m)} m`;
  return `${shape}, ${l.pumpStations.length} pump station${l.pumpStations.length === 1 ? '' : 's'}, rated ${sig(l.ratedCurrent_A)} A`;
}

function Block({ title, children }: { title: string; children: ReactNode }) {
  return (
    <div>
      <h4 className="label">{title}</h4>
      {children}
    </div>
  );
}

/** What changed from the previous sheet: inertia element by element, principal moments, loops field by field, ideal kT. */
export function SheetDiffView({ diff, previousFrom, fraction }: { diff: SheetDiff | null; previousFrom: string | null; fraction: number }) {
  return (
    <section className="panel" aria-label="Changes from the previous sheet">
      <header className="border-b border-rule px-4 py-3">
        <h3 className="font-semibold">Changes from the previous sheet</h3>
        <p className="text-xs text-muted">
          {previousFrom ? (
            <>
              Against the sheet effective from <span className="num">{utcText(previousFrom)}</span> UTC
            </>
          ) : (
            'This is the earliest sheet on record: nothing to compare with.'
          )}
        </p>
      </header>
      {diff && (
        <div className="space-y-4 p-4">
          <KtShiftWarning shifts={diff.idealKtShifts} fraction={fraction} />
          {diff.unchanged && <p className="text-muted">Only the effective date differs.</p>}
          {diff.name && (
            <Block title="Name">
              <p>
                {String(diff.name.before)} → <span className="font-medium">{String(diff.name.after)}</span>
              </p>
            </Block>
          )}
          {diff.mass && (
            <Block title="Mass">
              <ChangeTable caption="Mass" rows={[diff.mass]} unit="kg" />
            </Block>
          )}
          {diff.inertia.length > 0 && (
            <Block title="Inertia, element by element (kg·m²)">
              <ChangeTable caption="Element" rows={diff.inertia} unit="kg·m²" />
              <p className="mt-2 text-xs text-muted">
                Principal moments <span className="num text-ink">{diff.principal.before.map(sig).join(', ')}</span> →{' '}
                <span className="num font-medium text-ink">{diff.principal.after.map(sig).join(', ')}</span> <span className="unit">kg·m²</span>
              </p>
              {diff.principal.changes.length > 0 && (
                <div className="mt-2">
                  <ChangeTable caption="Principal moment" rows={diff.principal.changes} unit="kg·m²" />
                </div>
              )}
            </Block>
          )}
          {(diff.loops.added.length > 0 || diff.loops.removed.length > 0) && (
            <Block title="Loops added and removed">
              <ul className="space-y-0.5">
                {diff.loops.added.map((l) => (
                  <li key={`a${l.id}`}>
                    <span className="font-medium text-nominal">+ L{l.id} added</span> — {loopLine(l)}
                  </li>
                ))}
                {diff.loops.removed.map((l) => (
                  <li key={`r${l.id}`}>
                    <span className="font-medium text-warning">− L{l.id} removed</span> — {loopLine(l)}
                  </li>
                ))}
              </ul>
            </Block>
          )}
          {diff.loops.changed.map((l) => (
            <Block key={l.loopId} title={`Loop L${l.loopId}, field by field`}>
              <table className="table-compact w-auto" aria-label={`Changes of loop L${l.loopId}`}>
                <thead>
                  <tr>
                    <th>Field</th>
                    <th className="n">Before</th>
                    <th className="n">After</th>
                  </tr>
                </thead>
                <tbody>
                  {l.fields.map((f) => (
                    <tr key={f.path}>
                      <td className="font-mono text-xs">{f.path}</td>
                      <td className="n text-muted">{leafText(f.before, unitOfPath(f.path))}</td>
                      <td className="n font-medium">{leafText(f.after, unitOfPath(f.path))}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </Block>
          ))}
          {diff.idealKt.length > 0 && (
            <Block title="Ideal torque constant of the loops in both sheets">
              <table className="table-compact w-auto" aria-label="Ideal torque constants">
                <thead>
                  <tr>
                    <th>Loop</th>
                    <th className="n">Before</th>
                    <th className="n">After</th>
                    <th className="n">Change</th>
                    <th />
                  </tr>
                </thead>
                <tbody>
                  {diff.idealKt.map((k) => (
                    <tr key={k.loopId}>
                      <td>L{k.loopId}</td>
                      <td className="n text-muted">
                        {(k.before * 1000).toPrecision(4)}
                        <Unit u="mN·m/A" />
                      </td>
                      <td className="n font-medium">
                        {(k.after * 1000).toPrecision(4)}
                        <Unit u="mN·m/A" />
                      </td>
                      <td className="n">{pct(k.change)}</td>
                      <td className="text-xs">{k.warn ? <span className="font-semibold text-caution">▲ caution</span> : <span className="text-muted">within {Math.round(fraction * 100)} %</span>}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </Block>
          )}
          {diff.orbit && (
            <Block title="Orbit (two-line elements)">
              <pre className="overflow-x-auto rounded bg-paper px-3 py-2 font-mono text-xs text-muted">{diff.orbit.before.join('\n')}</pre>
              <pre className="mt-1 overflow-x-auto rounded bg-paper px-3 py-2 font-mono text-xs">{diff.orbit.after.join('\n')}</pre>
            </Block>
          )}
        </div>
      )}
    </section>
  );
}
