// Mail to the on-call operators: outbox, worker, roster, trip messages and digests.
export { enqueueMail, sendDueMail, listOutbox, countOutbox, outboxView, backoffMs, isPermanentFailure, MAX_ATTEMPTS } from './outbox';
export type { MailTransport, OutgoingMail, SendReport } from './outbox';
export { createMailTransport } from './transport';
export { startMailWorker, runMailRound } from './worker';
export type { MailWorker } from './worker';
export { recipientsFor, listOnCallShifts, listOnCallCandidates, listOnCallNow, addOnCallShift, removeOnCallShift, rosterView, canEditRoster } from './roster';
export type { OnCallShift, OnCallCandidate, RosterView } from './roster';
export { listMailbox, readMailboxMessage, mailboxDir } from './mailbox';
export type { MailboxEntry, MailboxMessage } from './mailbox';
export { enqueueTripMail, flushDigests, mailTripsClosedAtHandover, tripMessageKey, tripMailFactsSchema } from './trip-mail';
export type { TripMailRoute } from './trip-mail';
export { renderTripMail, renderDigest, CAUTION_LINE, LEVEL_STYLE } from './templates';
export type { TripMailFacts, DigestEntry, RenderedMail } from './templates';
