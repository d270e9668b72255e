import type { ReactNode } from 'react';
import { spacecraftSheetSchema, type LoopShape, type SheetLoop, type SpacecraftSheet } from '../../lib/spacecraft-sheet.schema';
import { symmetricEigenvalues3 } from '../../lib/physics/eigen3';
import { idealTorqueConstant } from '../../lib/physics/pump';
import { utcText } from '../../lib/format';
import type { SheetRow } from './sheets.queries';

const mm = (m: number) => (m * 1000).toFixed(m * 1000 < 10 ? 1 : 0);

function Q({ v, u }: { v: string; u: string }) {
  return (
    <span className="num">
      {v} <span className="unit">{u}</span>
    </span>
  );
}

function shapeText(s: LoopShape): ReactNode {
  if (s.kind === 'circle')
    return (
      <>
        circle, radius <Q v={mm(s.radius_m)} u="mm" />
      </>
    );
  return (
    <>
      rounded rectangle <Q v={`${mm(s.width_m)} × ${mm(s.height_m)}`} u="mm" />, corner radius <Q v={mm(s.cornerRadius_m)} u="mm" />
    </>
  );
}

function axisText(a: [number, number, number]): string {
  return `[${a.map((x) => (Math.abs(x) < 5e-7 ? '0' : String(Number(x.toFixed(6))))).join(', ')}]`;
}

function Row({ k, children }: { k: string; children: ReactNode }) {
  return (
    <div className="flex gap-3 border-b border-rule/60 py-1.5 last:border-0">
      <dt className="w-36 shrink-0 text-xs text-muted">{k}</dt>
      <dd className="min-w-0">{children}</dd>
    </div>
  );
}

function LoopCard({ loop }: { loop: SheetLoop }) {
  const kt = idealTorqueConstant(loop);
  return (
    <article className="rounded border border-rule p-3" aria-label={`Loop L${loop.id}`}>
      <h4 className="mb-1 font-semibold">L{loop.id}</h4>
      <dl>
        <Row k="Axis (body)">
          <span className="num">{axisText(loop.axis)}</span>
        </Row>
        <Row k="Shape">{shapeText(loop.shape)}</Row>
        <Row k="Channel">
          <Q v={`${mm(loop.channel.alongField_m)} × ${mm(loop.channel.alongCurrent_m)}`} u="mm" />{' '}
          <span className="text-xs text-muted">along field × along current</span>
        </Row>
        <Row k={`Pump stations (${loop.pumpStations.length})`}>
          <ul>
            {loop.pumpStations.map((s, i) => (
              <li key={i}>
                <Q v={s.field_T.toFixed(3)} u="T" />, electrodes <Q v={mm(s.electrodeLength_m)} u="mm" />
              </li>
            ))}
          </ul>
        </Row>
        <Row k="Fluid">
          <Q v={String(loop.fluid.density_kg_m3)} u="kg/m³" />, <Q v={String(loop.fluid.viscosity_Pa_s)} u="Pa·s" />,{' '}
          <Q v={(loop.fluid.conductivity_S_m / 1e6).toFixed(2)} u="MS/m" />
        </Row>
        <Row k="Rated current">
          <Q v={loop.ratedCurrent_A.toFixed(1)} u="A" />
        </Row>
        <Row k="Ideal torque constant">
          <Q v={(kt * 1000).toPrecision(4)} u="mN·m/A" />
        </Row>
      </dl>
    </article>
  );
}

function InertiaTable({ m }: { m: SpacecraftSheet['massProperties']['inertia_kg_m2'] }) {
  const axes = ['x', 'y', 'z'] as const;
  const principal = symmetricEigenvalues3(m);
  return (
    <div>
      <table className="table-compact w-auto" aria-label="Inertia matrix">
        <thead>
          <tr>
            <th>
              <span className="normal-case">kg·m²</span>
            </th>
            {axes.map((a) => (
              <th key={a} className="n">
                {a}
              </th>
            ))}
          </tr>
        </thead>
        <tbody>
          {m.map((row, i) => (
            <tr key={i}>
              <th scope="row" className="h-8 border-b border-rule/60 px-2 text-left text-xs font-medium text-muted">
                {axes[i]}
              </th>
              {row.map((v, j) => (
                <td key={j} className={`n ${i === j ? 'font-medium' : 'text-muted'}`}>
                  {v.toFixed(4)}
                </td>
              ))}
            </tr>
          ))}
        </tbody>
      </table>
      <p className="mt-1 text-xs text-muted">
        Principal moments <span className="num text-ink">{principal.map((p) => p.toFixed(4)).join(', ')}</span> <span className="unit">kg·m²</span>
      </p>
    </div>
  );
}

/** The sheet with its keys in the order of the sheet format (the database keeps them sorted its own way). */
export function canonicalSheet(sheet: SpacecraftSheet): SpacecraftSheet {
  const r = spacecraftSheetSchema.safeParse(sheet);
  return r.success ? r.data : sheet;
}

/** A readable view of one sheet: mass properties, orbit, each loop; and its raw JSON. */
export function SheetView({ row, state }: { row: SheetRow; state: string }) {
  const s = row.sheet;
  return (
    <section className="panel" aria-label={`Sheet effective from ${utcText(row.effective_from)}`}>
      <header className="flex flex-wrap items-baseline justify-between gap-2 border-b border-rule px-4 py-3">
        <div>
          <h2>
            Sheet effective from <span className="num">{utcText(row.effective_from)}</span> <span className="unit">UTC</span>
          </h2>
          <p className="text-xs text-muted">
            Uploaded by {row.uploaded_by ?? 'the demo seed'} at <span className="num">{utcText(row.uploaded_at)}</span> UTC · {state}
          </p>
        </div>
        <span className="text-xs text-muted">
          {s.spacecraft.key} · {s.spacecraft.name}
        </span>
      </header>
      <div className="space-y-5 p-4">
        <div className="grid gap-5 lg:grid-cols-[auto_1fr]">
          <div>
            <h3 className="label">Mass</h3>
            <p className="text-lg font-semibold">
              <Q v={s.massProperties.mass_kg.toFixed(2)} u="kg" />
            </p>
          </div>
          <div>
            <h3 className="label">Inertia about the centre of mass, body axes</h3>
            <InertiaTable m={s.massProperties.inertia_kg_m2} />
          </div>
        </div>
        <div>
          <h3 className="label">Loops ({s.loops.length})</h3>
          <div className="grid gap-3 md:grid-cols-2">
            {s.loops.map((l) => (
              <LoopCard key={l.id} loop={l} />
            ))}
          </div>
        </div>
        <div>
          <h3 className="label">Orbit (two-line elements)</h3>
          <pre className="overflow-x-auto rounded bg-paper px-3 py-2 font-mono text-xs">{s.orbit.tle.join('\n')}</pre>
        </div>
        <details>
          <summary className="cursor-pointer text-sm font-medium text-gallium">Raw JSON</summary>
          <pre className="mt-2 max-h-96 overflow-auto rounded bg-paper px-3 py-2 font-mono text-xs">
            {JSON.stringify(canonicalSheet(s), null, 2)}
          </pre>
        </details>
      </div>
    </section>
  );
}
