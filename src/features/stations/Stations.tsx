import { useState } from 'react';
import { QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { useForm, type Path } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { getQueryClient } from '../../lib/query-client';
import { ApiError } from '../../lib/http';
import { countText } from '../../lib/format';
import { createStation, deleteStation, stationsQuery, updateStation, type StationList, type StationRow } from './stations.queries';
import { createStationInputSchema, type CreateStationInput, type StationFields } from './stations.schema';

const NUMBER_FIELDS = [
  ['latitude_deg', 'Latitude', '°', 'north positive'],
  ['longitude_deg', 'Longitude', '°', 'east positive'],
  ['altitude_m', 'Altitude', 'm', 'above the WGS-84 ellipsoid'],
  ['elevation_mask_deg', 'Elevation mask', '°', 'AOS and LOS are taken here'],
] as const;
const ALL_FIELDS = ['key', 'name', ...NUMBER_FIELDS.map((f) => f[0])] as const;

function advice(err: unknown): string {
  if (!(err instanceof ApiError)) return 'Reload the page and try again.';
  if (err.status === 401) return 'Your session has ended: sign in again, then repeat.';
  if (err.status === 403) return 'Only engineers and admins edit ground stations.';
  if (err.status === 404) return 'Reload the page: the station has changed since it was read.';
  if (err.status === 0) return 'Check that Millrace is reachable and try again.';
  return Object.keys(err.fields).length ? 'Correct the fields marked and try again.' : '';
}

type FormValues = CreateStationInput;

/** The add form (with a key) or the edit form of one station (its key fixed). */
function StationForm({ station, onDone }: { station?: StationRow; onDone: (message: string) => void }) {
  const qc = useQueryClient();
  const editing = station !== undefined;
  const prefix = editing ? `edit-${station.key}` : 'new-station';
  const form = useForm<FormValues>({
    // Editing keeps the station's own (valid) key in the values, so one schema checks both forms.
    resolver: zodResolver(createStationInputSchema),
    defaultValues: station
      ? { key: station.key, name: station.name, latitude_deg: station.latitude_deg, longitude_deg: station.longitude_deg, altitude_m: station.altitude_m, elevation_mask_deg: station.elevation_mask_deg }
      : { key: '', name: '', elevation_mask_deg: 10, altitude_m: 0 },
  });
  const save = useMutation({
    mutationFn: (v: FormValues) => {
      if (!editing) return createStation(v);
      const fields: StationFields = { name: v.name, latitude_deg: v.latitude_deg, longitude_deg: v.longitude_deg, altitude_m: v.altitude_m, elevation_mask_deg: v.elevation_mask_deg };
      return updateStation(station.key, fields);
    },
    onSuccess: async (r) => {
      await Promise.all([qc.invalidateQueries({ queryKey: ['stations'] }), qc.invalidateQueries({ queryKey: ['passes'] })]);
      onDone(`${editing ? 'Saved' : 'Added'} ${r.station.key}. Passes recomputed: ${countText(r.passes.upcoming)} upcoming passes of the fleet over the next 3 days.`);
      if (!editing) form.reset();
    },
    onError: (err) => {
      if (!(err instanceof ApiError)) return;
      for (const f of ALL_FIELDS) if (err.fields[f]) form.setError(f, { message: err.fields[f]!.join(' ') });
    },
  });
  const errors = form.formState.errors;
  const aria = (name: Path<FormValues>) => ({
    id: `${prefix}-${name}`,
    'aria-invalid': errors[name as keyof FormValues] ? ('true' as const) : undefined,
    'aria-describedby': errors[name as keyof FormValues] ? `${prefix}-${name}-error` : undefined,
  });
  const errorOf = (name: keyof FormValues) =>
    errors[name]?.message ? (
      <p id={`${prefix}-${name}-error`} className="error-text mt-1">
        {errors[name]?.message}
      </p>
    ) : null;
  return (
    <form
      noValidate
      aria-label={editing ? `Edit ground station ${station.key}` : 'Add a ground station'}
      onSubmit={form.handleSubmit((v) => save.mutate(v))}
      className="space-y-2"
    >
      <div className="flex flex-wrap items-start gap-3">
        {!editing && (
          <div className="w-40">
            <label className="label" htmlFor={`${prefix}-key`}>
              Key
            </label>
            <input className="field" autoComplete="off" placeholder="e.g. north-fell" {...aria('key')} {...form.register('key')} />
            {errorOf('key')}
          </div>
        )}
        <div className="w-48">
          <label className="label" htmlFor={`${prefix}-name`}>
            Name
          </label>
          <input className="field" autoComplete="off" {...aria('name')} {...form.register('name')} />
          {errorOf('name')}
        </div>
        {NUMBER_FIELDS.map(([name, label, unit, hint]) => (
          <div key={name} className="w-36">
            <label className="label" htmlFor={`${prefix}-${name}`} title={hint}>
              {label} ({unit})
            </label>
            <input className="field num text-right" type="number" step="any" inputMode="decimal" {...aria(name)} {...form.register(name, { valueAsNumber: true })} />
            {errorOf(name)}
          </div>
        ))}
        <div className="flex gap-2 pt-5">
          <button type="submit" className="btn btn-primary" disabled={save.isPending}>
            {save.isPending ? 'Saving and recomputing passes…' : editing ? 'Save' : 'Add station'}
          </button>
          {editing && (
            <button type="button" className="btn" onClick={() => onDone('')} disabled={save.isPending}>
              Cancel
            </button>
          )}
        </div>
      </div>
      {save.isError && (
        <p role="alert" className="error-text">
          Not saved: {save.error.message} {advice(save.error)}
        </p>
      )}
    </form>
  );
}

function StationRowView({ s, canEdit, onMessage }: { s: StationRow; canEdit: boolean; onMessage: (m: string) => void }) {
  const qc = useQueryClient();
  const [mode, setMode] = useState<'view' | 'edit' | 'confirm-delete'>('view');
  const remove = useMutation({
    mutationFn: () => deleteStation(s.key),
    onSuccess: async () => {
      onMessage(`Deleted ${s.key}; its predicted passes are gone.`);
      await Promise.all([qc.invalidateQueries({ queryKey: ['stations'] }), qc.invalidateQueries({ queryKey: ['passes'] })]);
    },
  });
  const used = s.batches + s.uploads > 0;
  return (
    <>
      <tr>
        <td className="font-medium">{s.key}</td>
        <td>{s.name}</td>
        <td className="n">
          {s.latitude_deg.toFixed(4)} <span className="unit">°</span>
        </td>
        <td className="n">
          {s.longitude_deg.toFixed(4)} <span className="unit">°</span>
        </td>
        <td className="n">
          {s.altitude_m.toFixed(0)} <span className="unit">m</span>
        </td>
        <td className="n">
          {s.elevation_mask_deg.toFixed(1)} <span className="unit">°</span>
        </td>
        <td className="n">
          <a href={`/passes?station=${encodeURIComponent(s.key)}`} aria-label={`Passes over ${s.key}`}>
            {countText(s.passesNext24h)}
          </a>
        </td>
        <td className="n">{countText(s.batches)}</td>
        {canEdit && (
          <td className="whitespace-nowrap text-right">
            {mode === 'view' && (
              <>
                <button type="button" className="btn h-7 px-2 text-xs" aria-label={`Edit ${s.key}`} onClick={() => setMode('edit')}>
                  Edit
                </button>{' '}
                <button
                  type="button"
                  className="btn h-7 px-2 text-xs"
                  aria-label={`Delete ${s.key}`}
                  onClick={() => setMode('confirm-delete')}
                  title={used ? 'Telemetry arrived through this station: it is kept for the record' : undefined}
                >
                  Delete
                </button>
              </>
            )}
          </td>
        )}
      </tr>
      {mode === 'edit' && (
        <tr>
          <td colSpan={9} className="h-auto bg-paper/60 px-3 py-3">
            <StationForm
              station={s}
              onDone={(m) => {
                setMode('view');
                if (m) onMessage(m);
              }}
            />
          </td>
        </tr>
      )}
      {mode === 'confirm-delete' && (
        <tr>
          <td colSpan={9} className="h-auto bg-warning/10 px-3 py-2">
            <div role="group" aria-label={`Confirm deleting ${s.key}`} className="flex flex-wrap items-center gap-2">
              <span>
                Delete {s.name} ({s.key}) and its predicted passes?{used ? ' Telemetry arrived through it, so Millrace will keep it.' : ''}
              </span>
              <button type="button" className="btn border-warning bg-warning text-white hover:bg-[#a83320]" disabled={remove.isPending} onClick={() => remove.mutate()}>
                {remove.isPending ? 'Deleting…' : 'Yes, delete'}
              </button>
              <button type="button" className="btn" onClick={() => setMode('view')} disabled={remove.isPending}>
                Keep it
              </button>
            </div>
            {remove.isError && (
              <p role="alert" className="error-text mt-1">
                Not deleted: {remove.error.message} {advice(remove.error)}
              </p>
            )}
          </td>
        </tr>
      )}
    </>
  );
}

function StationsView({ initial, canEdit }: Props) {
  const q = useQuery({ ...stationsQuery, initialData: initial });
  const [message, setMessage] = useState('');
  const stations = q.data.stations;
  return (
    <div className="space-y-4">
      {message && (
        <p role="status" className="panel border-nominal/40 px-4 py-2 text-nominal">
          {message}
        </p>
      )}
      {q.isError && (
        <p role="alert" className="panel p-3 text-warning">
          Stations could not be refreshed: {q.error.message}
        </p>
      )}
      <div className="panel overflow-x-auto">
        <table className="table-compact" aria-label="Ground stations">
          <thead>
            <tr>
              <th>Key</th>
              <th>Name</th>
              <th className="n">Latitude</th>
              <th className="n">Longitude</th>
              <th className="n">Altitude</th>
              <th className="n">Mask</th>
              <th className="n">Passes next 24 h</th>
              <th className="n">Requests received</th>
              {canEdit && (
                <th>
                  <span className="sr-only">Actions</span>
                </th>
              )}
            </tr>
          </thead>
          <tbody>
            {stations.map((s) => (
              <StationRowView key={s.key} s={s} canEdit={canEdit} onMessage={setMessage} />
            ))}
          </tbody>
        </table>
        {stations.length === 0 && <p className="p-4 text-muted">No ground stations yet. {canEdit ? 'Add one below; passes are predicted for it at once.' : 'An engineer or admin adds them.'}</p>}
      </div>
      {canEdit ? (
        <section className="panel px-4 py-3" aria-labelledby="add-station-heading">
          <h2 id="add-station-heading" className="mb-2 text-sm">
            Add a ground station
          </h2>
          <StationForm onDone={setMessage} />
        </section>
      ) : (
        <p className="text-xs text-muted">Engineers and admins add and edit ground stations.</p>
      )}
    </div>
  );
}

interface Props {
  initial: StationList;
  canEdit: boolean;
}

/** The Stations island: ground stations, editable by engineers and admins. */
export default function Stations(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <StationsView {...props} />
    </QueryClientProvider>
  );
}
