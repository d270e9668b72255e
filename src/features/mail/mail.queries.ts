import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { MailboxEntry, MailboxMessage } from '../../lib/server/mail/mailbox';

export type { MailboxEntry, MailboxMessage };
export type OutboxState = 'queued' | 'sent' | 'failed';

/** An outbox row as GET /api/outbox sends it (times as ISO strings). */
export interface OutboxRow {
  id: number;
  message_key: string;
  kind: string;
  to_addresses: string[];
  subject: string;
  trip_id: number | null;
  state: OutboxState;
  attempts: number;
  next_attempt_at: string;
  last_error: string | null;
  created_at: string;
  sent_at: string | null;
}

export interface PendingDigestItem {
  id: number;
  trip_id: number;
  spacecraft_key: string;
  period_start: string;
  to_addresses: string[];
  cleared_at: string | null;
}

export interface OutboxResponse {
  rows: OutboxRow[];
  counts: Record<OutboxState, number>;
  pendingDigest: PendingDigestItem[];
}

/** The outbox, refreshed every 5 s. */
export const outboxQuery = queryOptions({
  queryKey: ['outbox'],
  queryFn: () => http<OutboxResponse>('/api/outbox'),
  refetchInterval: 5_000,
});

export type MailboxResponse = { messages: MailboxEntry[] };

/** The messages the local relay has caught, refreshed every 5 s. */
export const mailboxQuery = queryOptions({
  queryKey: ['mailbox'],
  queryFn: () => http<MailboxResponse>('/api/mailbox'),
  refetchInterval: 5_000,
});

/** One caught message, parsed. Messages never change once stored. */
export const mailboxMessageQuery = (id: string) =>
  queryOptions({
    queryKey: ['mailbox', id],
    queryFn: () => http<MailboxMessage>(`/api/mailbox/${encodeURIComponent(id)}`),
    staleTime: Infinity,
  });
