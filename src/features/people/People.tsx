import { ConfirmStrip } from '../../components/ConfirmStrip';
import { adviceFor } from '../../lib/advice';
import { useState } from 'react';
import { QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { useForm, type UseFormRegisterReturn } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import type { z } from 'zod';
import { getQueryClient } from '../../lib/query-client';
import { ApiError } from '../../lib/http';
import { utcText } from '../../lib/format';
import type { Role } from '../../lib/server/db/schema';
import { invitePerson, peopleQuery, resendInvitation, updatePerson, type Invited, type PeopleResponse, type PersonRow } from './people.queries';
import { ROLE_CHOICES, ROLE_HINTS, invitePersonInputSchema, rolesFormSchema, type InvitePersonInput, type RolesForm } from './people.schema';

const advice = (err: unknown) => adviceFor(err, { forbidden: 'Only admins manage people.', conflict: '' });

const STATUS_STYLE: Record<PersonRow['status'], { color: string; icon: string; word: string }> = {
  active: { color: '#2F8F6B', icon: '●', word: 'active' },
  invited: { color: '#5B7C99', icon: '◌', word: 'invited' },
  disabled: { color: '#8A8F98', icon: '⊘', word: 'disabled' },
};

function StatusBadge({ person }: { person: PersonRow }) {
  const s = STATUS_STYLE[person.status];
  return (
    <span className="inline-flex items-center gap-1 rounded-sm px-1.5 text-xs font-medium" style={{ color: s.color, backgroundColor: `${s.color}1a` }}>
      <span aria-hidden="true">{s.icon}</span>
      {s.word}
    </span>
  );
}

function InvitationNote({ person }: { person: PersonRow }) {
  if (person.status !== 'invited') return null;
  if (!person.invitation) return <div className="text-xs text-muted">no link sent</div>;
  return person.invitation.expired ? (
    <div className="text-xs text-caution">
      <span aria-hidden="true">▲ </span>link expired {utcText(person.invitation.expires_at).slice(0, 16)}
    </div>
  ) : (
    <div className="num text-xs text-muted">link until {utcText(person.invitation.expires_at).slice(0, 16)}</div>
  );
}

function RoleBoxes({ idPrefix, register, legend }: { idPrefix: string; register: () => UseFormRegisterReturn; legend: string }) {
  return (
    <fieldset>
      <legend className="label">{legend}</legend>
      <div className="grid gap-1 sm:grid-cols-2">
        {ROLE_CHOICES.map((role) => (
          <label key={role} htmlFor={`${idPrefix}-${role}`} className="flex items-start gap-2 rounded border border-rule px-2 py-1.5">
            <input id={`${idPrefix}-${role}`} type="checkbox" value={role} className="mt-0.5" {...register()} />
            <span>
              <span className="font-medium">{role}</span>
              <span className="block text-xs text-muted">{ROLE_HINTS[role]}</span>
            </span>
          </label>
        ))}
      </div>
    </fieldset>
  );
}

function InviteForm({ onInvited }: { onInvited: (i: Invited) => void }) {
  const qc = useQueryClient();
  const form = useForm<z.input<typeof invitePersonInputSchema>, unknown, InvitePersonInput>({
    resolver: zodResolver(invitePersonInputSchema),
    defaultValues: { name: '', email: '', roles: [] },
  });
  const invite = useMutation({
    mutationFn: (v: InvitePersonInput) => invitePerson(v),
    onSuccess: async (made) => {
      onInvited(made);
      form.reset();
      await qc.invalidateQueries({ queryKey: ['people'] });
    },
    onError: (err) => {
      if (!(err instanceof ApiError)) return;
      for (const f of ['name', 'email', 'roles'] as const) if (err.fields[f]) form.setError(f, { message: err.fields[f].join(' ') });
    },
  });
  const e = form.formState.errors;
  const fieldErrorShown = invite.error instanceof ApiError && ['name', 'email', 'roles'].some((f) => (invite.error as ApiError).fields[f]);
  return (
    <form onSubmit={form.handleSubmit((v) => invite.mutate(v))} noValidate aria-label="Invite someone" className="space-y-3">
      <div className="grid gap-3 sm:grid-cols-2">
        <div>
          <label className="label" htmlFor="invite-name">
            Name
          </label>
          <input id="invite-name" className="field" autoComplete="off" aria-invalid={e.name ? 'true' : undefined} {...form.register('name')} />
          {e.name && <p className="error-text mt-1">{e.name.message}</p>}
        </div>
        <div>
          <label className="label" htmlFor="invite-email">
            E-mail
          </label>
          <input id="invite-email" type="email" className="field" autoComplete="off" aria-invalid={e.email ? 'true' : undefined} {...form.register('email')} />
          {e.email && <p className="error-text mt-1">{e.email.message}</p>}
        </div>
      </div>
      <RoleBoxes idPrefix="invite-role" legend="Roles (at least one)" register={() => form.register('roles')} />
      {e.roles && <p className="error-text">{e.roles.message ?? e.roles.root?.message}</p>}
      <div className="flex flex-wrap items-center gap-3">
        <button type="submit" className="btn btn-primary" disabled={invite.isPending}>
          {invite.isPending ? 'Sending…' : 'Send invitation'}
        </button>
        <span className="text-xs text-muted">The mail carries a one-time link to set a password; it works for 72 hours.</span>
      </div>
      {invite.isError && !fieldErrorShown && (
        <p role="alert" className="error-text">
          Nobody was invited: {invite.error.message} {advice(invite.error)}
        </p>
      )}
    </form>
  );
}

function RolesEditor({ person, isSelf, onDone }: { person: PersonRow; isSelf: boolean; onDone: () => void }) {
  const qc = useQueryClient();
  const form = useForm<RolesForm>({ resolver: zodResolver(rolesFormSchema), defaultValues: { roles: person.roles } });
  const save = useMutation({
    mutationFn: (v: RolesForm) => updatePerson(person.id, { roles: v.roles as Role[] }),
    onSuccess: async () => {
      await qc.invalidateQueries({ queryKey: ['people'] });
      onDone();
    },
  });
  const err = form.formState.errors.roles;
  return (
    <form onSubmit={form.handleSubmit((v) => save.mutate(v))} noValidate aria-label={`Roles of ${person.name}`} className="space-y-2">
      <RoleBoxes idPrefix={`roles-${person.id}`} legend={`Roles of ${person.name}`} register={() => form.register('roles')} />
      {isSelf && <p className="text-xs text-muted">You keep the admin role on your own account; another admin can take it.</p>}
      {err && <p className="error-text">{err.message ?? err.root?.message}</p>}
      <div className="flex gap-2">
        <button type="submit" className="btn btn-primary" disabled={save.isPending}>
          {save.isPending ? 'Saving…' : 'Save roles'}
        </button>
        <button type="button" className="btn" onClick={onDone} disabled={save.isPending}>
          Cancel
        </button>
      </div>
      {save.isError && (
        <p role="alert" className="error-text">
          The roles were not changed: {save.error.message} {advice(save.error)}
        </p>
      )}
    </form>
  );
}

function DisableConfirm({ person, onDone }: { person: PersonRow; onDone: (msg: string | null) => void }) {
  const qc = useQueryClient();
  const disable = useMutation({
    mutationFn: () => updatePerson(person.id, { disabled: true }),
    onSuccess: async (r) => {
      await qc.invalidateQueries({ queryKey: ['people'] });
      onDone(`${person.name} is disabled; ${r.sessionsEnded} session${r.sessionsEnded === 1 ? '' : 's'} ended.`);
    },
  });
  return (
    <ConfirmStrip
      label={`Confirm disabling ${person.name}`}
      confirm="Yes, disable"
      pendingText="Disabling…"
      keep="Keep enabled"
      pending={disable.isPending}
      onConfirm={() => disable.mutate()}
      onKeep={() => onDone(null)}
      failure={disable.isError ? <>Not disabled: {disable.error.message} {advice(disable.error)}</> : undefined}
    >
      Disable {person.name}? {person.sessions > 0 ? `Their ${person.sessions} session${person.sessions === 1 ? '' : 's'} end at once; ` : ''}they cannot sign in until an
      admin enables the account again, and their open links stop working.
    </ConfirmStrip>
  );
}

function PersonLine({ person, selfId, onNotice }: { person: PersonRow; selfId: string; onNotice: (msg: string) => void }) {
  const qc = useQueryClient();
  const [open, setOpen] = useState<'roles' | 'disable' | null>(null);
  const isSelf = person.id === selfId;
  const enable = useMutation({
    mutationFn: () => updatePerson(person.id, { disabled: false }),
    onSuccess: async () => {
      await qc.invalidateQueries({ queryKey: ['people'] });
      onNotice(`${person.name} is enabled again and can sign in.`);
    },
  });
  const resend = useMutation({
    mutationFn: () => resendInvitation(person.id),
    onSuccess: async (r) => {
      await qc.invalidateQueries({ queryKey: ['people'] });
      onNotice(`A new invitation to ${person.email} is in the Outbox; its link works until ${utcText(r.invitation.expiresAt).slice(0, 16)} UTC.`);
    },
  });
  const failed = enable.error ?? resend.error;
  return (
    <>
      <tr className={person.status === 'disabled' ? 'text-muted' : ''}>
        <td className="font-medium">
          {person.name}
          {isSelf && <span className="ml-1 text-xs font-normal text-muted">(you)</span>}
        </td>
        <td>{person.email}</td>
        <td>{person.roles.length ? person.roles.join(', ') : <span className="text-warning">none</span>}</td>
        <td>
          <StatusBadge person={person} />
          <InvitationNote person={person} />
        </td>
        <td className="n">{person.sessions}</td>
        <td className="n whitespace-nowrap">{person.created_at.slice(0, 10)}</td>
        <td className="whitespace-nowrap text-right">
          <div className="inline-flex gap-1">
            <button type="button" className="btn h-7 px-2 text-xs" aria-expanded={open === 'roles'} aria-label={`Change roles of ${person.name}`} onClick={() => setOpen(open === 'roles' ? null : 'roles')}>
              Roles
            </button>
            {person.status === 'invited' && (
              <button type="button" className="btn h-7 px-2 text-xs" aria-label={`Send a new invitation to ${person.name}`} disabled={resend.isPending} onClick={() => resend.mutate()}>
                {resend.isPending ? 'Sending…' : 'Resend invitation'}
              </button>
            )}
            {person.status === 'disabled' ? (
              <button type="button" className="btn h-7 px-2 text-xs" aria-label={`Enable ${person.name}`} disabled={enable.isPending} onClick={() => enable.mutate()}>
                {enable.isPending ? 'Enabling…' : 'Enable'}
              </button>
            ) : (
              !isSelf && (
                <button type="button" className="btn h-7 px-2 text-xs" aria-label={`Disable ${person.name}`} aria-expanded={open === 'disable'} onClick={() => setOpen(open === 'disable' ? null : 'disable')}>
                  Disable
                </button>
              )
            )}
          </div>
          {failed && (
            <p role="alert" className="error-text mt-1 whitespace-normal text-left">
              {failed.message} {advice(failed)}
            </p>
          )}
        </td>
      </tr>
      {open && (
        <tr>
          <td colSpan={7} className={`h-auto px-3 py-3 ${open === 'disable' ? 'bg-warning/10' : 'bg-paper'}`}>
            {open === 'roles' ? (
              <RolesEditor person={person} isSelf={isSelf} onDone={() => setOpen(null)} />
            ) : (
              <DisableConfirm
                person={person}
                onDone={(msg) => {
                  setOpen(null);
                  if (msg) onNotice(msg);
                }}
              />
            )}
          </td>
        </tr>
      )}
    </>
  );
}

function PeoplePanels({ initial, selfId }: { initial: PeopleResponse; selfId: string }) {
  const q = useQuery({ ...peopleQuery(), initialData: initial });
  const [notice, setNotice] = useState<string | null>(null);
  const people = q.data.people;
  const counts = { active: 0, invited: 0, disabled: 0 };
  for (const p of people) counts[p.status]++;
  return (
    <div className="grid items-start gap-5 xl:grid-cols-[1fr_26rem]">
      <section className="panel" aria-labelledby="people-h">
        <header className="flex flex-wrap items-baseline justify-between gap-2 border-b border-rule px-4 py-3">
          <h2 id="people-h">Everyone</h2>
          <span className="text-xs text-muted">
            <span className="num">{counts.active}</span> active · <span className="num">{counts.invited}</span> invited · <span className="num">{counts.disabled}</span> disabled
          </span>
        </header>
        {notice && (
          <p role="status" className="border-b border-rule bg-nominal/10 px-4 py-2 text-sm">
            {notice}{' '}
            <button type="button" className="ml-2 text-xs text-gallium underline" onClick={() => setNotice(null)}>
              Dismiss
            </button>
          </p>
        )}
        {q.isError && (
          <p role="alert" className="error-text px-4 pt-2">
            The list could not be refreshed: {q.error.message}. {advice(q.error)}
          </p>
        )}
        <div className="overflow-x-auto">
          <table className="table-compact" aria-label="People">
            <thead>
              <tr>
                <th>Name</th>
                <th>E-mail</th>
                <th>Roles</th>
                <th>Status</th>
                <th className="n">Sessions</th>
                <th className="n">Since</th>
                <th className="text-right">
                  <span className="sr-only">Actions</span>
                </th>
              </tr>
            </thead>
            <tbody>
              {people.map((p) => (
                <PersonLine key={p.id} person={p} selfId={selfId} onNotice={setNotice} />
              ))}
            </tbody>
          </table>
        </div>
        <p className="px-4 py-2 text-xs text-muted">
          Every change here is written to the <a href="/admin/audit?targetType=user">audit log</a>. Disabling someone ends their sessions at once.
        </p>
      </section>
      <section className="panel p-4" aria-labelledby="invite-h">
        <h2 id="invite-h" className="mb-3">
          Invite someone
        </h2>
        <InviteForm onInvited={(i) => setNotice(`Invitation to ${i.person.email} is in the Outbox; its link works until ${utcText(i.invitation.expiresAt).slice(0, 16)} UTC.`)} />
      </section>
    </div>
  );
}

/** The admin's People: everyone with roles and status; invite, change roles, disable and enable. */
export default function People(props: { initial: PeopleResponse; selfId: string }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <PeoplePanels {...props} />
    </QueryClientProvider>
  );
}
