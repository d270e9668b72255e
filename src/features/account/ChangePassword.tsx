import { useState } from 'react';
import { QueryClientProvider, useMutation } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { ApiError } from '../../lib/http';
import { changePassword } from './account.queries';
import { changePasswordFormSchema, type ChangePasswordForm } from './account.schema';

const FIELDS = ['currentPassword', 'newPassword', 'confirmPassword'] as const;

function PasswordForm({ email }: { email: string }) {
  const [done, setDone] = useState<string | null>(null);
  const form = useForm<ChangePasswordForm>({
    resolver: zodResolver(changePasswordFormSchema),
    defaultValues: { currentPassword: '', newPassword: '', confirmPassword: '' },
  });
  const change = useMutation({
    mutationFn: (v: ChangePasswordForm) => changePassword({ currentPassword: v.currentPassword, newPassword: v.newPassword }),
    onSuccess: (r) => {
      form.reset();
      setDone(
        r.otherSessionsEnded > 0
          ? `Your password is changed. ${r.otherSessionsEnded} other session${r.otherSessionsEnded === 1 ? '' : 's'} of your account ended; this one stays signed in.`
          : 'Your password is changed. This session stays signed in.',
      );
    },
    onError: (err) => {
      setDone(null);
      if (!(err instanceof ApiError)) return;
      for (const f of FIELDS) if (err.fields[f]) form.setError(f, { message: err.fields[f].join(' ') });
    },
  });
  const e = form.formState.errors;
  const onField = change.error instanceof ApiError && FIELDS.some((f) => (change.error as ApiError).fields[f]);
  const field = (name: (typeof FIELDS)[number], label: string, autoComplete: string, hint?: string) => (
    <div>
      <label className="label" htmlFor={name}>
        {label}
      </label>
      <input id={name} type="password" className="field" autoComplete={autoComplete} aria-invalid={e[name] ? 'true' : undefined} aria-describedby={hint ? `${name}-hint` : undefined} {...form.register(name)} />
      {hint && (
        <p id={`${name}-hint`} className="mt-1 text-xs text-muted">
          {hint}
        </p>
      )}
      {e[name] && <p className="error-text mt-1">{e[name]?.message}</p>}
    </div>
  );
  return (
    <form onSubmit={form.handleSubmit((v) => change.mutate(v))} noValidate aria-label="Change your password" className="space-y-3">
      {/* The account name helps password managers pair the new password with the right account. */}
      <input type="text" name="username" autoComplete="username" value={email} readOnly hidden />
      {field('currentPassword', 'Current password', 'current-password')}
      {field('newPassword', 'New password', 'new-password', 'At least 10 characters. A passphrase of several words is easy to type and hard to guess.')}
      {field('confirmPassword', 'New password again', 'new-password')}
      <button type="submit" className="btn btn-primary" disabled={change.isPending}>
        {change.isPending ? 'Changing…' : 'Change password'}
      </button>
      {done && (
        <p role="status" className="rounded border border-nominal/40 bg-nominal/10 px-3 py-2 text-sm">
          {done}
        </p>
      )}
      {change.isError && !onField && (
        <p role="alert" className="error-text">
          The password was not changed: {change.error.message}
        </p>
      )}
    </form>
  );
}

/** Change one's own password: the current one, the new one twice; the server's policy answers on the field. */
export default function ChangePassword(props: { email: string }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <PasswordForm {...props} />
    </QueryClientProvider>
  );
}
