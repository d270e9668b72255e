import { ConfirmStrip } from '../../components/ConfirmStrip';
import { adviceFor } from '../../lib/advice';
import { useRef, useState } from 'react';
import { QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { getQueryClient } from '../../lib/query-client';
import { ApiError } from '../../lib/http';
import { createToken, revokeToken, tokensQuery, type TokenCreated, type TokenRow, type TokensResponse } from './tokens.queries';
import { createTokenFormSchema, type CreateTokenForm } from './tokens.schema';
import { utcText } from '../../lib/format';

interface SpacecraftTokens {
  key: string;
  name: string;
  initial: TokensResponse;
}

const advice = (err: unknown) => adviceFor(err, { forbidden: 'Only admins manage ingest tokens.' });

function NewToken({ created, onDone }: { created: TokenCreated; onDone: () => void }) {
  const input = useRef<HTMLInputElement>(null);
  const [copy, setCopy] = useState<'idle' | 'copied' | 'manual'>('idle');
  const onCopy = async () => {
    try {
      await navigator.clipboard.writeText(created.token);
      setCopy('copied');
    } catch {
      input.current?.select();
      setCopy('manual');
    }
  };
  return (
    <section role="status" aria-label={`New token ${created.label}`} className="space-y-2 rounded border border-copper/60 bg-copper/10 p-3">
      <p className="font-semibold">
        Token “{created.label}” for {created.spacecraft}: copy it now — it will not be shown again.
      </p>
      <div className="flex gap-2">
        <input
          ref={input}
          readOnly
          aria-label="New ingest token"
          value={created.token}
          onFocus={(e) => e.currentTarget.select()}
          className="field font-mono text-xs"
        />
        <button type="button" className="btn btn-primary shrink-0" onClick={onCopy}>
          {copy === 'copied' ? 'Copied' : 'Copy'}
        </button>
      </div>
      <p className="text-xs text-muted">
        {copy === 'manual'
          ? 'The browser did not allow copying: the token is selected, press Ctrl+C (⌘C) to copy it.'
          : 'Millrace keeps only a digest of it. Give it to the station’s ingest script as “Authorization: Bearer …”. If it is lost, revoke it and create another.'}
      </p>
      <button type="button" className="btn" onClick={onDone}>
        I have stored it
      </button>
    </section>
  );
}

function TokenLine({ spacecraft, token }: { spacecraft: string; token: TokenRow }) {
  const qc = useQueryClient();
  const [confirming, setConfirming] = useState(false);
  const revoke = useMutation({
    mutationFn: () => revokeToken(spacecraft, token.id),
    onSuccess: () => {
      setConfirming(false);
      return qc.invalidateQueries({ queryKey: ['tokens', spacecraft] });
    },
  });
  const revoked = token.revoked_at !== null;
  return (
    <>
      <tr className={revoked ? 'text-muted' : ''}>
        <td className={revoked ? 'line-through' : 'font-medium'}>{token.label}</td>
        <td className="num font-mono text-xs">····{token.token_hint}</td>
        <td className="whitespace-nowrap">
          {token.created_by_name ?? '—'}
          <span className="num ml-1 text-xs text-muted">{utcText(token.created_at)}</span>
        </td>
        <td className="num whitespace-nowrap">{token.last_used_at ? utcText(token.last_used_at) : <span className="text-muted">never</span>}</td>
        <td className="num whitespace-nowrap">{revoked ? utcText(token.revoked_at) : <span className="text-nominal">live</span>}</td>
        <td className="whitespace-nowrap text-right">
          {!revoked && !confirming && (
            <button type="button" className="btn h-7 px-2 text-xs" onClick={() => setConfirming(true)} aria-label={`Revoke ${token.label}`}>
              Revoke
            </button>
          )}
        </td>
      </tr>
      {confirming && (
        <tr>
          <td colSpan={6} className="h-auto bg-warning/10 px-3 py-2">
            <ConfirmStrip
              label={`Confirm revoking ${token.label}`}
              confirm="Yes, revoke"
              pendingText="Revoking…"
              keep="Keep it"
              pending={revoke.isPending}
              onConfirm={() => revoke.mutate()}
              onKeep={() => setConfirming(false)}
              failure={revoke.isError ? <>Not revoked: {revoke.error.message} {advice(revoke.error)}</> : undefined}
            >
              Revoke “{token.label}” (····{token.token_hint})? Whatever posts telemetry with it is refused from then on; this cannot be undone.
            </ConfirmStrip>
          </td>
        </tr>
      )}
    </>
  );
}

function SpacecraftPanel({ sc }: { sc: SpacecraftTokens }) {
  const qc = useQueryClient();
  const q = useQuery({ ...tokensQuery(sc.key), initialData: sc.initial });
  const [created, setCreated] = useState<TokenCreated | null>(null);
  const form = useForm<CreateTokenForm>({ resolver: zodResolver(createTokenFormSchema), defaultValues: { label: '' } });
  const create = useMutation({
    mutationFn: (v: CreateTokenForm) => createToken(sc.key, v.label),
    onSuccess: async (made) => {
      setCreated(made);
      form.reset();
      await qc.invalidateQueries({ queryKey: ['tokens', sc.key] });
    },
    onError: (err) => {
      if (err instanceof ApiError && err.fields.label) form.setError('label', { message: err.fields.label.join(' ') });
    },
  });
  const tokens = q.data.tokens;
  const live = tokens.filter((t) => t.revoked_at === null).length;
  const labelError = form.formState.errors.label?.message;
  const inputId = `token-label-${sc.key}`;
  return (
    <section className="panel" aria-label={`Ingest tokens of ${sc.key}`}>
      <header className="flex items-baseline justify-between border-b border-rule px-4 py-3">
        <div>
          <h2>
            {sc.key} <span className="font-normal text-muted">· {sc.name}</span>
          </h2>
        </div>
        <span className="text-xs text-muted">
          <span className="num">{live}</span> live · <span className="num">{tokens.length - live}</span> revoked
        </span>
      </header>
      {q.isError && (
        <p role="alert" className="error-text px-4 pt-2">
          The list could not be refreshed: {q.error.message}. {advice(q.error)}
        </p>
      )}
      {tokens.length === 0 ? (
        <p className="px-4 py-3 text-muted">No tokens for {sc.key} yet — create one below and give it to the ground station’s ingest script.</p>
      ) : (
        <div className="overflow-x-auto">
          <table className="table-compact">
            <thead>
              <tr>
                <th>Label</th>
                <th>Token</th>
                <th>Created by (UTC)</th>
                <th>Last used (UTC)</th>
                <th>Revoked (UTC)</th>
                <th className="text-right">
                  <span className="sr-only">Actions</span>
                </th>
              </tr>
            </thead>
            <tbody>
              {tokens.map((t) => (
                <TokenLine key={t.id} spacecraft={sc.key} token={t} />
              ))}
            </tbody>
          </table>
        </div>
      )}
      <div className="space-y-3 px-4 py-3">
        {created && <NewToken created={created} onDone={() => setCreated(null)} />}
        <form onSubmit={form.handleSubmit((v) => create.mutate(v))} noValidate className="flex flex-wrap items-start gap-2" aria-label={`Create a token for ${sc.key}`}>
          <div className="w-72">
            <label className="label" htmlFor={inputId}>
              Label of a new token
            </label>
            <input
              id={inputId}
              className="field"
              placeholder="e.g. north-fell ingest script"
              aria-invalid={labelError ? 'true' : undefined}
              {...form.register('label')}
            />
            {labelError && <p className="error-text mt-1">{labelError}</p>}
          </div>
          <button type="submit" className="btn btn-primary mt-5" disabled={create.isPending}>
            {create.isPending ? 'Creating…' : 'Create token'}
          </button>
        </form>
        {create.isError && !(create.error instanceof ApiError && create.error.fields.label) && (
          <p role="alert" className="error-text">
            The token was not created: {create.error.message} {advice(create.error)}
          </p>
        )}
      </div>
    </section>
  );
}

/** The admin's ingest tokens: per spacecraft, list, create (shown once) and revoke. */
export default function Tokens({ spacecraft }: { spacecraft: SpacecraftTokens[] }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      {spacecraft.length === 0 ? (
        <p className="panel px-4 py-4 text-muted">There is no spacecraft yet — an engineer adds one by posting its sheet; then create its tokens here.</p>
      ) : (
        <div className="space-y-5">
          {spacecraft.map((sc) => (
            <SpacecraftPanel key={sc.key} sc={sc} />
          ))}
        </div>
      )}
    </QueryClientProvider>
  );
}
