import { createHash, randomBytes } from 'node:crypto';
import { sql, type Kysely, type Transaction } from 'kysely';
import { z } from 'zod';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { hashPassword, passwordProblem } from './auth/password';
import { checkCredentials } from './auth/sign-in';
import { enqueueMail } from './mail/outbox';
import { escapeHtml, formatUtc } from './mail/templates';
import { insertAuditEntry } from './audit';
import { config } from './config';
import { findUserByEmail } from './users';

type Db = Kysely<Database> | Transaction<Database>;
export type TokenPurpose = 'invite' | 'reset';

/** How long a one-time link works. */
export const TOKEN_TTL_MS: Record<TokenPurpose, number> = {
  reset: 60 * 60_000,
  invite: 72 * 60 * 60_000,
};

/** Reset requests allowed per window, by the address asked for and by the requesting client. */
export const RESET_LIMITS = {
  windowMinutes: 60,
  perEmail: 3,
  perAddress: 20,
} as const;

/** POST /api/password-reset and the forgot-password form. */
export const passwordResetRequestSchema = z.object({
  email: z.string({ required_error: 'Enter your e-mail address.' }).trim().min(1, 'Enter your e-mail address.').max(254, 'That address is too long.').email('Enter a valid e-mail address.'),
});
export type PasswordResetRequest = z.infer<typeof passwordResetRequestSchema>;

/** POST /api/password-reset/confirm and the set-password forms. */
export const setPasswordInputSchema = z.object({
  token: z.string({ required_error: 'The link’s token is missing.' }).min(1, 'The link’s token is missing.').max(200, 'That is not a token of a link.'),
  password: z.string({ required_error: 'Choose a password.' }).min(1, 'Choose a password.').max(1000, 'That password is too long.'),
});
export type SetPasswordInput = z.infer<typeof setPasswordInputSchema>;

/** The answer to every reset request, whether or not an account uses the address. */
export const RESET_REQUEST_ANSWER =
  'If an account uses that address, a link to set a new password is on its way. It works once, within 1 hour. Check the spam folder if nothing arrives in a few minutes.';

const TOKEN_SHAPE = /^[A-Za-z0-9_-]{20,200}$/;

/** Links are stored as SHA-256 digests only: the 256-bit random token is in the mail and nowhere else. */
export function hashUserToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

/** The page a link opens. */
export function tokenLink(purpose: TokenPurpose, token: string, publicUrl = config().PUBLIC_URL): string {
  return `${publicUrl.replace(/\/+$/, '')}/${purpose === 'invite' ? 'invite' : 'reset-password'}/${token}`;
}

/** Create a one-time link for a user, voiding earlier open links of the same purpose. */
export async function issueUserToken(
  trx: Db,
  input: { userId: string; purpose: TokenPurpose; createdBy: string | null; now: Date },
): Promise<{ id: number; token: string; expiresAt: Date }> {
  await trx
    .updateTable('user_token')
    .set({ used_at: input.now })
    .where('user_id', '=', input.userId)
    .where('purpose', '=', input.purpose)
    .where('used_at', 'is', null)
    .execute();
  const token = randomBytes(32).toString('base64url');
  const expiresAt = new Date(input.now.getTime() + TOKEN_TTL_MS[input.purpose]);
  const row = await trx
    .insertInto('user_token')
    .values({ user_id: input.userId, purpose: input.purpose, token_hash: hashUserToken(token), created_by: input.createdBy, created_at: input.now, expires_at: expiresAt })
    .returning('id')
    .executeTakeFirstOrThrow();
  return { id: row.id, token, expiresAt };
}

/** Void every open link of a user (on disabling, or once a password is set). */
export async function voidUserTokens(trx: Db, userId: string, now: Date, purpose?: TokenPurpose): Promise<void> {
  let q = trx.updateTable('user_token').set({ used_at: now }).where('user_id', '=', userId).where('used_at', 'is', null);
  if (purpose) q = q.where('purpose', '=', purpose);
  await q.execute();
}

export type TokenProblem = 'unknown' | 'used' | 'expired' | 'disabled';

/** What a link-holder is told when the link does not work, and what to do. */
export function tokenProblemMessage(problem: TokenProblem, purpose: TokenPurpose): string {
  const hours = TOKEN_TTL_MS[purpose] / 3_600_000;
  const span = `${hours} hour${hours === 1 ? '' : 's'}`;
  switch (problem) {
    case 'unknown':
      return 'This link is not valid. Open the whole address from the mail, or ask for a new link.';
    case 'used':
      return purpose === 'invite'
        ? 'This invitation has already been used or was replaced by a newer one. Sign in with the password you set, or ask for a password reset.'
        : 'This link has already been used or was replaced by a newer one. Each link works once: ask for a new one.';
    case 'expired':
      return purpose === 'invite'
        ? `This invitation has expired (invitations work for ${span}). Ask an admin to send a new one.`
        : `This link has expired (links work for ${span}). Ask for a new one.`;
    case 'disabled':
      return 'This account is disabled. Ask an admin.';
  }
}

interface TokenRow {
  id: number;
  user_id: string;
  expires_at: Date;
  used_at: Date | null;
  email: string;
  name: string;
  disabled_at: Date | null;
}

function findTokenRow(db: Db, token: string, purpose: TokenPurpose, lock: boolean): Promise<TokenRow | undefined> {
  const q = db
    .selectFrom('user_token as t')
    .innerJoin('app_user as u', 'u.id', 't.user_id')
    .select(['t.id', 't.user_id', 't.expires_at', 't.used_at', 'u.email', 'u.name', 'u.disabled_at'])
    .where('t.token_hash', '=', hashUserToken(token))
    .where('t.purpose', '=', purpose);
  return (lock ? q.forUpdate() : q).executeTakeFirst();
}

function problemOf(row: TokenRow | undefined, now: Date): TokenProblem | null {
  if (!row) return 'unknown';
  if (row.used_at) return 'used';
  if (row.expires_at.getTime() <= now.getTime()) return 'expired';
  if (row.disabled_at) return 'disabled';
  return null;
}

/** Whether a link works now, and for whom (the set-password pages show the name and address). */
export async function inspectUserToken(
  db: Db,
  token: string,
  purpose: TokenPurpose,
  now = new Date(),
): Promise<{ ok: true; user: { id: string; email: string; name: string }; expiresAt: Date } | { ok: false; problem: TokenProblem }> {
  if (!TOKEN_SHAPE.test(token)) return { ok: false, problem: 'unknown' };
  const row = await findTokenRow(db, token, purpose, false);
  const problem = problemOf(row, now);
  if (problem || !row) return { ok: false, problem: problem ?? 'unknown' };
  return { ok: true, user: { id: row.user_id, email: row.email, name: row.name }, expiresAt: row.expires_at };
}

/**
 * Set a password through a one-time link: the link is locked, checked, and used up in one
 * transaction (so it works once even when two requests race); every other open link of the user is
 * voided and every session of the user ended.
 */
export async function setPasswordWithToken(
  db: Kysely<Database>,
  input: { token: string; purpose: TokenPurpose; password: string },
  now = new Date(),
): Promise<{ userId: string; email: string }> {
  const problem = passwordProblem(input.password);
  if (problem) throw new HttpError('BAD_REQUEST', 'Choose another password; see fields.', { password: [problem] });
  if (!TOKEN_SHAPE.test(input.token)) throw new HttpError('NOT_FOUND', tokenProblemMessage('unknown', input.purpose));
  const hash = await hashPassword(input.password);
  return db.transaction().execute(async (trx) => {
    const row = await findTokenRow(trx, input.token, input.purpose, true);
    const p = problemOf(row, now);
    if (p || !row) throw new HttpError('NOT_FOUND', tokenProblemMessage(p ?? 'unknown', input.purpose));
    await trx.updateTable('app_user').set({ password_hash: hash }).where('id', '=', row.user_id).execute();
    await voidUserTokens(trx, row.user_id, now);
    await trx.deleteFrom('user_session').where('user_id', '=', row.user_id).execute();
    await trx.deleteFrom('sign_in_attempt').where('scope', '=', 'account').where('key', '=', row.email.toLowerCase()).execute();
    await insertAuditEntry(trx, {
      actorId: row.user_id,
      action: input.purpose === 'invite' ? 'user.invite-accept' : 'password.reset',
      targetType: 'user',
      targetId: row.user_id,
      detail: { tokenId: row.id },
    });
    return { userId: row.user_id, email: row.email };
  });
}

/** The subject, text and HTML of an invitation or reset mail. */
export function renderAccountMail(
  purpose: TokenPurpose,
  input: { name: string; email: string; link: string; expiresAt: Date; invitedBy?: string | null },
): { subject: string; text: string; html: string } {
  const until = formatUtc(input.expiresAt);
  const subject = purpose === 'invite' ? '[Millrace] You are invited: set your password' : '[Millrace] Set a new password';
  const lead =
    purpose === 'invite'
      ? `${input.invitedBy ? `${input.invitedBy} has` : 'An admin has'} invited you to Millrace, the flight team's health monitor for liquid-metal momentum loops, as ${input.email}.`
      : `Someone (we hope you) asked to set a new password for the Millrace account ${input.email}.`;
  const action = purpose === 'invite' ? 'Open this link to choose your password' : 'Open this link to choose a new password';
  const after =
    purpose === 'invite'
      ? 'Then sign in with this address and the password you chose.'
      : 'If you did not ask for this, ignore this message: your password stays as it is. Setting a new one signs you out everywhere.';
  const text = [`Hello ${input.name},`, '', lead, '', `${action} (it works once, until ${until}):`, input.link, '', after, ''].join('\n');
  const html = `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${escapeHtml(subject)}</title></head>
<body style="margin:0;padding:24px;background:#F6F5F1;color:#1B2430;font-family:'Inter Tight',system-ui,sans-serif">
<div style="max-width:560px;margin:0 auto;background:#FFFFFD;border:1px solid #DDDAD0;border-radius:6px;padding:20px">
<p style="margin:0 0 12px 0">Hello ${escapeHtml(input.name)},</p>
<p style="margin:0 0 12px 0">${escapeHtml(lead)}</p>
<p style="margin:16px 0"><a href="${escapeHtml(input.link)}" style="display:inline-block;background:#5B7C99;color:#FFFFFF;padding:8px 14px;border-radius:4px;font-weight:600;text-decoration:none">${escapeHtml(action)}</a></p>
<p style="margin:0 0 12px 0;font-size:13px;color:#606975">It works once, until ${escapeHtml(until)}. If the button does not open, paste this address into the browser:<br><span style="word-break:break-all">${escapeHtml(input.link)}</span></p>
<p style="margin:0;font-size:13px;color:#606975">${escapeHtml(after)}</p>
</div>
</body></html>
`;
  return { subject, text, html };
}

/** Issue a link and queue its mail in the caller's transaction. */
export async function sendAccountLink(
  trx: Db,
  input: { user: { id: string; email: string; name: string }; purpose: TokenPurpose; createdBy: string | null; invitedBy?: string | null; now: Date },
): Promise<{ tokenId: number; expiresAt: Date; link: string }> {
  const issued = await issueUserToken(trx, { userId: input.user.id, purpose: input.purpose, createdBy: input.createdBy, now: input.now });
  const link = tokenLink(input.purpose, issued.token);
  const mail = renderAccountMail(input.purpose, { name: input.user.name, email: input.user.email, link, expiresAt: issued.expiresAt, invitedBy: input.invitedBy });
  await enqueueMail(trx, { messageKey: `${input.purpose}:${issued.id}`, kind: input.purpose === 'invite' ? 'invitation' : 'password-reset', to: [input.user.email], ...mail });
  return { tokenId: issued.id, expiresAt: issued.expiresAt, link };
}

function resetWindowStart(now: Date): Date {
  const ms = RESET_LIMITS.windowMinutes * 60_000;
  return new Date(Math.floor(now.getTime() / ms) * ms);
}

async function countRequest(db: Kysely<Database>, scope: 'email' | 'address', key: string, now: Date): Promise<number> {
  const row = await db
    .insertInto('password_reset_attempt')
    .values({ scope, key, window_start: resetWindowStart(now), requests: 1 })
    .onConflict((oc) => oc.columns(['scope', 'key', 'window_start']).doUpdateSet({ requests: sql`password_reset_attempt.requests + 1` }))
    .returning('requests')
    .executeTakeFirstOrThrow();
  return row.requests;
}

/**
 * Ask for a reset link. The counters are kept by the address asked for, so a refusal (429) and
 * the answer look the same whether or not an account uses it; a link is mailed only to an existing,
 * enabled account.
 */
export async function requestPasswordReset(db: Kysely<Database>, input: { email: string; address: string }, now = new Date()): Promise<void> {
  const email = input.email.trim().toLowerCase();
  const [byEmail, byAddress] = await Promise.all([countRequest(db, 'email', email, now), countRequest(db, 'address', input.address, now)]);
  if (byEmail > RESET_LIMITS.perEmail || byAddress > RESET_LIMITS.perAddress) {
    const retry = Math.ceil((resetWindowStart(now).getTime() + RESET_LIMITS.windowMinutes * 60_000 - now.getTime()) / 1000);
    throw new HttpError('TOO_MANY_REQUESTS', `Too many reset requests. Wait ${Math.ceil(retry / 60)} min and try again.`, undefined, { 'retry-after': String(retry) });
  }
  const user = await findUserByEmail(db, email);
  if (!user || user.disabled_at) return;
  await db.transaction().execute(async (trx) => {
    const sent = await sendAccountLink(trx, { user, purpose: 'reset', createdBy: null, now });
    await insertAuditEntry(trx, { actorId: null, action: 'password.reset-request', targetType: 'user', targetId: user.id, detail: { tokenId: sent.tokenId, address: input.address } });
  });
}

/**
 * Change one's own password: the current one is checked under the sign-in rate limits, the new one
 * against the password policy; the user's other sessions end and open reset links are voided.
 */
export async function changePassword(
  db: Kysely<Database>,
  input: { user: { id: string; email: string }; sessionId: string | null; currentPassword: string; newPassword: string; address: string },
  now = new Date(),
): Promise<{ otherSessionsEnded: number }> {
  try {
    const id = await checkCredentials(db, { email: input.user.email, password: input.currentPassword, address: input.address }, now);
    if (id !== input.user.id) throw new HttpError('UNAUTHORIZED', 'Sign in again.');
  } catch (err) {
    if (err instanceof HttpError && err.code === 'UNAUTHORIZED') {
      throw new HttpError('BAD_REQUEST', 'The current password is wrong; see fields.', { currentPassword: ['That is not your current password.'] });
    }
    throw err;
  }
  const problem = passwordProblem(input.newPassword);
  if (problem) throw new HttpError('BAD_REQUEST', 'Choose another new password; see fields.', { newPassword: [problem] });
  if (input.newPassword === input.currentPassword) {
    throw new HttpError('BAD_REQUEST', 'Choose another new password; see fields.', { newPassword: ['Choose a password different from the current one.'] });
  }
  const hash = await hashPassword(input.newPassword);
  return db.transaction().execute(async (trx) => {
    await trx.updateTable('app_user').set({ password_hash: hash }).where('id', '=', input.user.id).execute();
    let del = trx.deleteFrom('user_session').where('user_id', '=', input.user.id);
    if (input.sessionId) del = del.where('id', '!=', input.sessionId);
    const ended = Number((await del.executeTakeFirst()).numDeletedRows);
    await voidUserTokens(trx, input.user.id, now, 'reset');
    await insertAuditEntry(trx, { actorId: input.user.id, action: 'password.change', targetType: 'user', targetId: input.user.id, detail: { otherSessionsEnded: ended } });
    return { otherSessionsEnded: ended };
  });
}

/** What a set-password page shows: the form, a field error, the outcome, or why the link does not work. */
export interface SetPasswordView {
  status: number;
  user: { email: string; name: string } | null;
  expiresAt: string | null;
  fields: Record<string, string[]>;
  done: { email: string } | null;
  problem: string | null;
}

/** The invite and reset-password pages: `form` is the posted form (password, confirm), or null for GET. */
export async function setPasswordPage(db: Kysely<Database>, form: FormData | null, token: string, purpose: TokenPurpose, now = new Date()): Promise<SetPasswordView> {
  const state = await inspectUserToken(db, token, purpose, now);
  if (!state.ok) {
    return { status: state.problem === 'unknown' ? 404 : 410, user: null, expiresAt: null, fields: {}, done: null, problem: tokenProblemMessage(state.problem, purpose) };
  }
  const view: SetPasswordView = { status: 200, user: { email: state.user.email, name: state.user.name }, expiresAt: state.expiresAt.toISOString(), fields: {}, done: null, problem: null };
  if (!form) return view;
  const password = String(form.get('password') ?? '');
  const confirm = String(form.get('confirm') ?? '');
  if (!password) return { ...view, status: 400, fields: { password: ['Choose a password.'] } };
  if (password !== confirm) return { ...view, status: 400, fields: { confirm: ['The two passwords differ; type the same one twice.'] } };
  try {
    return { ...view, done: await setPasswordWithToken(db, { token, purpose, password }, now) };
  } catch (err) {
    if (!(err instanceof HttpError)) throw err;
    if (err.fields) return { ...view, status: 400, fields: err.fields };
    return { ...view, status: 410, problem: err.message };
  }
}
