import { z } from 'zod';
import type Mail from 'nodemailer/lib/mailer';
import type { Kysely, Transaction } from 'kysely';
import type { Database } from '../db/schema';
import { config } from '../config';

type Db = Kysely<Database> | Transaction<Database>;

/** What the worker needs of a mail transport (a nodemailer transporter fits). */
export interface MailTransport {
  sendMail(message: Mail.Options): Promise<{ response?: string; rejected?: unknown[] }>;
}

export interface OutgoingMail {
  /** De-duplication key: a second message with the same key is dropped. */
  messageKey: string;
  kind: string;
  to: string[];
  subject: string;
  text: string;
  html?: string | null;
  tripId?: number | null;
  /** First moment the worker may send it (the caller's clock); default the database's now(). */
  notBefore?: Date;
}

/** Attempts before a message is given up as failed. */
export const MAX_ATTEMPTS = 12;
const BASE_DELAY_MS = 30_000;
const MAX_DELAY_MS = 30 * 60_000;

/**
 * The wait after the n-th failed attempt: 30 s × 2^(n−1), capped at 30 min (truncated exponential
 * backoff, common practice for mail retries). 12 attempts span about three hours.
 */
export function backoffMs(failedAttempts: number): number {
  return Math.min(BASE_DELAY_MS * 2 ** Math.max(0, failedAttempts - 1), MAX_DELAY_MS);
}

/**
 * Queue a message in the caller's transaction; ON CONFLICT (message_key) DO NOTHING makes a repeat
 * a no-op. Returns the new row's id, or null when the key was already queued. A message with no
 * recipient is stored as failed at once, so that the Outbox shows it instead of it vanishing.
 */
export async function enqueueMail(trx: Db, mail: OutgoingMail): Promise<number | null> {
  const to = [...new Set(mail.to.map((a) => a.trim().toLowerCase()).filter(Boolean))].sort();
  const row = await trx
    .insertInto('outbox')
    .values({
      message_key: mail.messageKey,
      kind: mail.kind,
      to_addresses: to,
      subject: mail.subject,
      text_body: mail.text,
      html_body: mail.html ?? null,
      trip_id: mail.tripId ?? null,
      ...(mail.notBefore ? { next_attempt_at: mail.notBefore } : {}),
      ...(to.length === 0 ? { state: 'failed' as const, last_error: 'No recipient: nobody is on call and no active operator account exists.' } : {}),
    })
    .onConflict((oc) => oc.column('message_key').doNothing())
    .returning('id')
    .executeTakeFirst();
  return row?.id ?? null;
}

interface SmtpError {
  code?: string;
  responseCode?: number;
  message?: string;
}

const AUTH_REPLIES = new Set([530, 534, 535, 538]);

/**
 * A 5yz reply to the envelope or the message is a permanent refusal (Klensin, "Simple Mail
 * Transfer Protocol", RFC 5321, 2008, §4.2.1): retrying cannot help, and neither can an envelope
 * the client itself refuses to send (no valid recipient). Authentication replies (530, 534, 535,
 * 538 of Siemborski & Melnikov, "SMTP Service Extension for Authentication", RFC 4954, 2007) and
 * connection failures stay transient: fixing the configuration fixes them.
 */
export function isPermanentFailure(err: unknown): boolean {
  const e = err as SmtpError;
  if (e?.code !== 'EENVELOPE' && e?.code !== 'EMESSAGE') return false;
  if (e.responseCode === undefined) return e.code === 'EENVELOPE';
  return e.responseCode >= 500 && e.responseCode < 600 && !AUTH_REPLIES.has(e.responseCode);
}

function errorText(err: unknown): string {
  const e = err as SmtpError;
  const msg = (e?.message ?? String(err)).replace(/\s+/g, ' ').trim();
  const tag = [e?.code, e?.responseCode].filter((x) => x !== undefined).join(' ');
  return (tag ? `${tag}: ${msg}` : msg).slice(0, 500);
}

function domainOf(from: string): string {
  return /@([A-Za-z0-9.-]+)/.exec(from)?.[1] ?? 'millrace.localhost';
}

export interface SendReport {
  sent: number;
  retried: number;
  failed: number;
}

/**
 * Send the due queued messages, one row per transaction locked FOR UPDATE SKIP LOCKED so that
 * workers never send a row twice at the same time. On failure the attempt is counted and the next
 * one put off by backoffMs; after MAX_ATTEMPTS, or on a permanent refusal, the row is failed.
 */
export async function sendDueMail(
  db: Kysely<Database>,
  transport: MailTransport,
  now: Date,
  opts: { limit?: number; from?: string } = {},
): Promise<SendReport> {
  const limit = opts.limit ?? 50;
  const from = opts.from ?? config().MAIL_FROM;
  const report: SendReport = { sent: 0, retried: 0, failed: 0 };
  for (let i = 0; i < limit; i++) {
    const outcome = await db.transaction().execute(async (trx) => {
      const row = await trx
        .selectFrom('outbox')
        .select(['id', 'message_key', 'to_addresses', 'subject', 'text_body', 'html_body', 'attempts'])
        .where('state', '=', 'queued')
        .where('next_attempt_at', '<=', now)
        .orderBy('next_attempt_at')
        .orderBy('id')
        .limit(1)
        .forUpdate()
        .skipLocked()
        .executeTakeFirst();
      if (!row) return null;
      const attempts = row.attempts + 1;
      try {
        const info = await transport.sendMail({
          from,
          to: row.to_addresses,
          subject: row.subject,
          text: row.text_body,
          ...(row.html_body ? { html: row.html_body } : {}),
          // A stable Message-ID lets a mail client fold the rare resend after a crash.
          messageId: `<outbox-${row.id}@${domainOf(from)}>`,
          headers: { 'X-Millrace-Message-Key': row.message_key },
        });
        const rejected = (info.rejected ?? []).map(String);
        await trx
          .updateTable('outbox')
          .set({ state: 'sent', attempts, sent_at: now, last_error: rejected.length ? `Relay refused ${rejected.join(', ')}` : null })
          .where('id', '=', row.id)
          .execute();
        return 'sent' as const;
      } catch (err) {
        const give = attempts >= MAX_ATTEMPTS || isPermanentFailure(err);
        await trx
          .updateTable('outbox')
          .set({
            state: give ? 'failed' : 'queued',
            attempts,
            last_error: errorText(err),
            next_attempt_at: give ? now : new Date(now.getTime() + backoffMs(attempts)),
          })
          .where('id', '=', row.id)
          .execute();
        return give ? ('failed' as const) : ('retried' as const);
      }
    });
    if (!outcome) break;
    report[outcome]++;
  }
  return report;
}

/** Outbox rows for the admin's page, newest first (bodies left out). */
export function listOutbox(db: Db, opts: { limit?: number; state?: 'queued' | 'sent' | 'failed' } = {}) {
  let q = db
    .selectFrom('outbox')
    .select(['id', 'message_key', 'kind', 'to_addresses', 'subject', 'trip_id', 'state', 'attempts', 'next_attempt_at', 'last_error', 'created_at', 'sent_at'])
    .orderBy('created_at', 'desc')
    .orderBy('id', 'desc')
    .limit(opts.limit ?? 200);
  if (opts.state) q = q.where('state', '=', opts.state);
  return q.execute();
}

/** How many rows are in each state. */
export async function countOutbox(db: Db): Promise<Record<'queued' | 'sent' | 'failed', number>> {
  const rows = await db.selectFrom('outbox').select(['state', db.fn.countAll<number>().as('n')]).groupBy('state').execute();
  const out = { queued: 0, sent: 0, failed: 0 };
  for (const r of rows) out[r.state] = r.n;
  return out;
}

export const outboxQuerySchema = z.object({
  state: z.enum(['queued', 'sent', 'failed']).optional(),
  limit: z.coerce.number().int().min(1).max(1000).default(200),
});
export type OutboxQuery = z.infer<typeof outboxQuerySchema>;

/** What the Outbox page shows: rows, counts per state, and caution trips waiting for a digest. */
export async function outboxView(db: Db, q: OutboxQuery) {
  const [rows, counts, pendingDigest] = await Promise.all([
    listOutbox(db, q),
    countOutbox(db),
    db
      .selectFrom('mail_digest_item as d')
      .innerJoin('spacecraft as s', 's.id', 'd.spacecraft_id')
      .select(['d.id', 'd.trip_id', 's.key as spacecraft_key', 'd.period_start', 'd.to_addresses', 'd.cleared_at'])
      .where('d.digested_at', 'is', null)
      .orderBy('d.period_start')
      .orderBy('d.id')
      .execute(),
  ]);
  return { rows, counts, pendingDigest };
}
