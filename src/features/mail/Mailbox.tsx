import { useState, type ReactNode } from 'react';
import { QueryClientProvider, useQuery } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { utcText } from '../../lib/format';
import { mailboxMessageQuery, mailboxQuery, type MailboxResponse } from './mail.queries';

/** Plain text with its web addresses as links (React escapes everything else). */
function linkified(text: string): ReactNode[] {
  return text.split(/(https?:\/\/[^\s<>"]+)/g).map((part, i) =>
    i % 2 === 1 ? (
      <a key={i} href={part}>
        {part}
      </a>
    ) : (
      part
    ),
  );
}

// Caught mail is shown as it is, but may not fetch anything: no scripts (sandbox), no remote images,
// fonts or styles (this policy), so opening a message never calls out.
const FRAME_POLICY = `<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">`;

function withPolicy(html: string): string {
  return /<head[^>]*>/i.test(html) ? html.replace(/<head[^>]*>/i, (h) => h + FRAME_POLICY) : FRAME_POLICY + html;
}

function Message({ id }: { id: string }) {
  const q = useQuery(mailboxMessageQuery(id));
  if (q.isPending) return <p className="p-4 text-muted">Opening the message…</p>;
  if (q.isError)
    return (
      <p role="alert" className="error-text p-4">
        The message could not be read: {q.error.message} Reload the page and choose it again.
      </p>
    );
  const m = q.data;
  return (
    <article aria-label={`Message ${m.subject}`} className="flex min-w-0 flex-col">
      <header className="space-y-0.5 border-b border-rule px-4 py-3">
        <h2 className="text-base">{m.subject || '(no subject)'}</h2>
        <dl className="grid grid-cols-[5rem_1fr] gap-x-2 text-xs">
          <dt className="text-muted">From</dt>
          <dd>{m.from || '—'}</dd>
          <dt className="text-muted">To</dt>
          <dd>{m.to || '—'}</dd>
          <dt className="text-muted">Received</dt>
          <dd className="num">{utcText(m.receivedAt)} UTC</dd>
          <dt className="text-muted">Message-ID</dt>
          <dd className="break-all font-mono">{m.messageId ?? '—'}</dd>
        </dl>
      </header>
      {m.html !== null && (
        <section aria-label="HTML part" className="border-b border-rule">
          <h3 className="px-4 pt-2 text-xs font-medium uppercase tracking-wide text-muted">HTML</h3>
          {/* No sandbox permissions at all: no scripts, no forms, no same-origin access. */}
          <iframe title={`HTML of ${m.subject}`} sandbox="" srcDoc={withPolicy(m.html)} className="h-[26rem] w-full bg-white" />
        </section>
      )}
      <section aria-label="Plain text part">
        <h3 className="px-4 pt-2 text-xs font-medium uppercase tracking-wide text-muted">Plain text</h3>
        <pre className="num overflow-x-auto whitespace-pre-wrap break-words px-4 py-2 font-mono text-xs">{linkified(m.text)}</pre>
      </section>
    </article>
  );
}

function MailboxPanel({ initial, relay }: { initial: MailboxResponse; relay: string }) {
  const q = useQuery({ ...mailboxQuery, initialData: initial });
  const messages = q.data.messages;
  const [chosen, setChosen] = useState<string | null>(null);
  const selected = chosen && messages.some((m) => m.id === chosen) ? chosen : (messages[0]?.id ?? null);
  return (
    <div className="panel grid min-h-[30rem] md:grid-cols-[22rem_1fr]">
      <div className="border-b border-rule md:border-b-0 md:border-r">
        <div className="flex items-baseline justify-between border-b border-rule px-3 py-2 text-xs text-muted">
          <span>
            <span className="num">{messages.length}</span> message{messages.length === 1 ? '' : 's'}
          </span>
          <span>{q.isFetching ? 'checking…' : 'checks every 5 s'}</span>
        </div>
        {q.isError && (
          <p role="alert" className="error-text px-3 py-2">
            Mailbox could not be refreshed: {q.error.message}
          </p>
        )}
        {messages.length === 0 ? (
          <p className="p-4 text-muted">
            Mailbox is empty. The local relay on {relay} keeps every message Millrace sends; trip mail appears here once the mail worker has sent it.
            Mail still waiting is listed in <a href="/admin/outbox">Outbox</a>.
          </p>
        ) : (
          <ul aria-label="Messages" className="max-h-[40rem] overflow-y-auto">
            {messages.map((m) => (
              <li key={m.id} className="border-b border-rule/60">
                <button
                  type="button"
                  aria-pressed={m.id === selected}
                  onClick={() => setChosen(m.id)}
                  className={`block w-full px-3 py-2 text-left hover:bg-paper ${m.id === selected ? 'bg-paper shadow-[inset_3px_0_0_#5B7C99]' : ''}`}
                >
                  <span className="block truncate text-sm font-medium" title={m.subject}>
                    {m.subject || '(no subject)'}
                  </span>
                  <span className="flex justify-between gap-2 text-xs text-muted">
                    <span className="truncate">to {m.envelopeTo.join(', ')}</span>
                    <span className="num shrink-0">{utcText(m.receivedAt).slice(5, 16)}</span>
                  </span>
                </button>
              </li>
            ))}
          </ul>
        )}
      </div>
      <div className="min-w-0">{selected ? <Message id={selected} /> : <p className="p-4 text-muted">Choose a message on the left.</p>}</div>
    </div>
  );
}

/** Mailbox: what the local relay of the demo has received. */
export default function Mailbox({ initial, relay }: { initial: MailboxResponse; relay: string }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <MailboxPanel initial={initial} relay={relay} />
    </QueryClientProvider>
  );
}
