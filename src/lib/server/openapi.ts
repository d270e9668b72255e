import { z, type ZodTypeAny } from 'zod';
import { extendZodWithOpenApi, OpenAPIRegistry, OpenApiGeneratorV3, type RouteConfig } from '@asteasolutions/zod-to-openapi';
import type { OpenAPIObject, ReferenceObject, SchemaObject } from 'openapi3-ts/oas30';
import { accessFor, routeRules } from './auth/access';
import type { Access } from './auth/roles';
import { signInInputSchema } from './auth/session';
import { spacecraftSheetSchema } from '../spacecraft-sheet.schema';
import { acknowledgeInputSchema, resolveInputSchema, tripQuerySchema } from '../trips.schema';
import { limitSetInputSchema } from '../limits/limit-set.schema';
import { outboxQuerySchema } from './mail/outbox';
import { spacecraftKeySchema, idParamSchema } from './params';
import { passwordResetRequestSchema, setPasswordInputSchema } from './password-reset';
import { invitePersonInputSchema, personIdSchema, updatePersonInputSchema, ROLE_CHOICES } from '../../features/people/people.schema';
import { auditQuerySchema } from '../../features/audit/audit.schema';
import { changePasswordInputSchema } from '../../features/account/account.schema';
import { createStationInputSchema, stationKeySchema, updateStationInputSchema } from '../../features/stations/stations.schema';
import { passQuerySchema } from '../../features/passes/passes.schema';
import { liveQuerySchema, passNoteInputSchema } from '../../features/pass-watch/pass-watch.schema';
import { createOnCallShiftInputSchema } from '../../features/roster/roster.schema';
import { backtestInputSchema, createDraftInputSchema, limitSetListQuerySchema, returnInputSchema, reviewCommentInputSchema } from '../../features/limit-bench/limit-bench.schema';
import { createTokenFormSchema } from '../../features/tokens/tokens.schema';
import { conclusionInputSchema, evidenceQuerySchema, noteInputSchema, rawQuerySchema } from '../../features/casefile/casefile.schema';

/*
 * The OpenAPI 3.0 description of Millrace's JSON API, generated from the zod schemas the endpoints
 * parse with. Each operation's access (public, signed-in, or the roles) is read from the route
 * table, so the description cannot drift from what the guard enforces. GET /api/openapi.json
 * serves it to anyone signed in; /docs/api renders it.
 */
extendZodWithOpenApi(z);

/** API routes deliberately left out of the description, with the reason (none at present). */
export const OPENAPI_EXCLUDED: Record<string, string> = {};

type Method = 'get' | 'post' | 'patch' | 'put' | 'delete';

interface Operation {
  method: Method;
  /** The route pattern as the route table writes it: /api/trips/[id]. */
  route: string;
  tag: string;
  summary: string;
  description?: string;
  params?: z.AnyZodObject;
  query?: NonNullable<RouteConfig['request']>['query'];
  body?: { schema: ZodTypeAny | SchemaObject; type?: string; description?: string };
  ok: { status: number; description: string; schema?: ZodTypeAny | SchemaObject; type?: string };
  errors?: number[];
  security?: 'ingest';
}

const ERROR_TEXT: Record<number, string> = {
  400: 'The request has errors; `fields` names each by its path.',
  401: 'Not signed in (or the ingest token is missing or unknown).',
  403: 'Signed in, but the roles do not allow this.',
  404: 'No such thing.',
  409: 'It conflicts with what is on record.',
  413: 'The body is too large.',
  429: 'Too many attempts; Retry-After says when to try again.',
};

/** Route pattern → OpenAPI path: /api/trips/[id] → /api/trips/{id}. */
export function openApiPath(route: string): string {
  return route.replace(/\[([^\]]+)\]/g, '{$1}');
}

/** The route table's access rule in words. */
export function accessText(access: Access | null): string {
  if (access === null) return 'no rule (refused)';
  if (access === 'public') return 'public';
  if (access === 'signed-in') return 'anyone signed in';
  return `roles: ${access.join(', ')}`;
}

function buildRegistry(): OpenAPIRegistry {
  const r = new OpenAPIRegistry();
  r.registerComponent('securitySchemes', 'session', {
    type: 'apiKey',
    in: 'cookie',
    name: 'millrace_session',
    description: 'The session cookie set by POST /api/auth/sign-in (HttpOnly, SameSite=Lax).',
  });
  r.registerComponent('securitySchemes', 'ingestToken', {
    type: 'http',
    scheme: 'bearer',
    description: 'An ingest token of one spacecraft (Admin › Tokens), as "Authorization: Bearer mrt_…".',
  });

  const ErrorEnvelope = r.register(
    'Error',
    z
      .object({
        error: z.object({
          code: z.enum(['BAD_REQUEST', 'UNAUTHORIZED', 'FORBIDDEN', 'NOT_FOUND', 'CONFLICT', 'PAYLOAD_TOO_LARGE', 'TOO_MANY_REQUESTS', 'INTERNAL_SERVER_ERROR']),
          message: z.string().openapi({ description: 'What went wrong and what to do.' }),
          fields: z.record(z.array(z.string())).optional().openapi({ description: 'Messages by field path (JSON path for sheets).' }),
        }),
      })
      .openapi({ description: 'The one error envelope of every endpoint.' }),
  );
  const Role = r.register('Role', z.enum(ROLE_CHOICES));
  const SessionUser = r.register('SessionUser', z.object({ id: z.string(), email: z.string().email(), name: z.string(), roles: z.array(Role) }));
  const Sheet = r.register('SpacecraftSheet', spacecraftSheetSchema.openapi({ description: 'Mass properties and loop geometry of one spacecraft, effective-dated.' }));
  const SignInInput = r.register('SignInInput', signInInputSchema);
  const Gap = z.object({ apid: z.number().int(), from: z.number().int(), to: z.number().int() });
  const IngestReport = r.register(
    'IngestReport',
    z
      .object({
        accepted: z.number().int().openapi({ description: 'Packets stored.' }),
        duplicates: z.number().int().openapi({ description: 'Packets already on record (same APID, time tag, sequence count).' }),
        rejected: z.array(z.object({ offset: z.number().int().openapi({ description: 'Byte offset in the body.' }), reason: z.string() })),
        gaps: z.array(Gap).openapi({ description: 'Sequence-count gaps found.' }),
      })
      .openapi({ description: 'What one ingest body or upload produced.' }),
  );
  const UploadReport = r.register('UploadReport', IngestReport.extend({ uploadId: z.number().int(), sha256: z.string().nullable() }));
  const IdealKtShift = z.object({
    loopId: z.number().int(),
    before: z.number().openapi({ description: 'N·m/A' }),
    after: z.number().openapi({ description: 'N·m/A' }),
    change: z.number().openapi({ description: 'after/before − 1' }),
  });
  const SheetRecord = r.register(
    'SheetRecord',
    z.object({ id: z.number().int(), effective_from: z.string().datetime(), sheet: Sheet, uploaded_at: z.string().datetime(), uploaded_by: z.string().nullable() }),
  );
  const Person = r.register(
    'Person',
    z.object({
      id: personIdSchema,
      email: z.string().email(),
      name: z.string(),
      roles: z.array(Role),
      status: z.enum(['active', 'invited', 'disabled']),
      disabled_at: z.string().datetime().nullable(),
      created_at: z.string().datetime(),
      sessions: z.number().int().openapi({ description: 'Sessions that have not expired.' }),
      invitation: z.object({ expires_at: z.string().datetime(), expired: z.boolean() }).nullable(),
    }),
  );
  const AuditEntry = r.register(
    'AuditEntry',
    z.object({
      id: z.number().int(),
      at: z.string().datetime(),
      actor_id: z.string().nullable(),
      actor_name: z.string().nullable(),
      actor_email: z.string().nullable(),
      action: z.string().openapi({ example: 'user.roles' }),
      target_type: z.string().openapi({ example: 'user' }),
      target_id: z.string(),
      target_name: z.string().nullable(),
      detail: z.record(z.unknown()).openapi({ description: 'What changed, as the action records it (e.g. before and after).' }),
    }),
  );
  const LimitSetInput = r.register('LimitSetInput', limitSetInputSchema.openapi({ description: 'A limit set as the Limit bench edits it.' }));
  r.register('NoteInput', noteInputSchema.openapi({ description: 'The text part of a Casefile note (multipart field `body`).' }));
  const json = (description: string) => z.record(z.unknown()).openapi({ description });

  const key = z.object({ key: spacecraftKeySchema.openapi({ description: 'Spacecraft key', example: 'MR-1' }) });
  const keyId = key.extend({ id: idParamSchema.openapi({ type: 'integer', description: 'Row id' }) });
  const idOnly = z.object({ id: idParamSchema.openapi({ type: 'integer', description: 'Row id' }) });
  const station = z.object({ key: stationKeySchema.openapi({ description: 'Ground station key', example: 'north-fell' }) });
  const person = z.object({ id: personIdSchema });
  const binary: SchemaObject = { type: 'string', format: 'binary' };

  const ops: Operation[] = [
    // Sign-in and the account.
    {
      method: 'post', route: '/api/auth/sign-in', tag: 'Sign-in', summary: 'Sign in', description: 'Sets the session cookie. Failed attempts are limited per account and per client address.',
      body: { schema: SignInInput }, ok: { status: 200, description: 'Signed in.', schema: z.object({ user: z.object({ id: z.string(), email: z.string(), roles: z.array(Role) }) }) }, errors: [400, 401, 429],
    },
    { method: 'post', route: '/api/auth/sign-out', tag: 'Sign-in', summary: 'Sign out', description: 'A browser form post is answered 303 to /sign-in instead.', ok: { status: 200, description: 'Signed out.', schema: z.object({ signedOut: z.literal(true) }) }, errors: [401] },
    { method: 'get', route: '/api/me', tag: 'Sign-in', summary: 'Who is signed in', ok: { status: 200, description: 'The signed-in user.', schema: z.object({ user: SessionUser }) }, errors: [401] },
    {
      method: 'post', route: '/api/account/password', tag: 'Account', summary: 'Change your password', description: 'The current password is checked under the sign-in limits; the new one against the password policy (at least 10 characters). Your other sessions end.',
      body: { schema: changePasswordInputSchema }, ok: { status: 200, description: 'Changed.', schema: z.object({ changed: z.literal(true), otherSessionsEnded: z.number().int() }) }, errors: [400, 401, 429],
    },
    {
      method: 'post', route: '/api/password-reset', tag: 'Account', summary: 'Ask for a password-reset link', description: 'The same 202 answer whether or not an account uses the address; a link (1 hour, single use) is mailed only to an existing, enabled account. Limited per address asked for and per client.',
      body: { schema: passwordResetRequestSchema }, ok: { status: 202, description: 'Accepted.', schema: z.object({ accepted: z.literal(true), message: z.string() }) }, errors: [400, 429],
    },
    {
      method: 'post', route: '/api/password-reset/confirm', tag: 'Account', summary: 'Set a new password with a reset link’s token', description: 'Works once, within the link’s hour; every session of the account ends.',
      body: { schema: setPasswordInputSchema }, ok: { status: 200, description: 'Password set.', schema: z.object({ passwordSet: z.literal(true) }) }, errors: [400, 404],
    },
    // People and the audit log.
    { method: 'get', route: '/api/people', tag: 'People', summary: 'List people', ok: { status: 200, description: 'Everyone, by name.', schema: z.object({ people: z.array(Person) }) }, errors: [401, 403] },
    {
      method: 'post', route: '/api/people', tag: 'People', summary: 'Invite someone', description: 'Creates the account without a password and mails a one-time link (72 hours) to set one.',
      body: { schema: invitePersonInputSchema }, ok: { status: 201, description: 'Invited.', schema: z.object({ person: Person, invitation: z.object({ expiresAt: z.string().datetime() }) }) }, errors: [400, 401, 403, 409],
    },
    {
      method: 'patch', route: '/api/people/[id]', tag: 'People', summary: 'Change roles, disable or re-enable', description: 'Disabling ends every session of the person. Nobody can remove their own admin role or disable themselves; the last admin keeps the role. Every change is audited.',
      params: person, body: { schema: updatePersonInputSchema }, ok: { status: 200, description: 'Changed.', schema: z.object({ person: Person, sessionsEnded: z.number().int() }) }, errors: [400, 401, 403, 404, 409],
    },
    {
      method: 'post', route: '/api/people/[id]/invitation', tag: 'People', summary: 'Send a fresh invitation', description: 'Only for someone who has not set a password; the earlier link stops working.',
      params: person, ok: { status: 201, description: 'Sent.', schema: z.object({ person: Person, invitation: z.object({ expiresAt: z.string().datetime() }) }) }, errors: [401, 403, 404, 409],
    },
    {
      method: 'get', route: '/api/audit', tag: 'People', summary: 'The audit log', description: 'Newest first; from is inclusive, to exclusive (UTC).',
      query: auditQuerySchema,
      ok: {
        status: 200, description: 'One page of entries with the filters’ choices.',
        schema: z.object({
          total: z.number().int(), page: z.number().int(), pageSize: z.number().int(), entries: z.array(AuditEntry),
          facets: z.object({ actors: z.array(z.object({ id: z.string().nullable(), name: z.string(), email: z.string().nullable() })), actions: z.array(z.string()), targetTypes: z.array(z.string()) }),
        }),
      },
      errors: [400, 401, 403],
    },
    // Spacecraft and sheets.
    { method: 'get', route: '/api/spacecraft', tag: 'Spacecraft', summary: 'The fleet', ok: { status: 200, description: 'Every spacecraft with each loop’s state.', schema: z.object({ spacecraft: z.array(json('One spacecraft of the Fleet.')) }) }, errors: [401] },
    { method: 'post', route: '/api/spacecraft', tag: 'Spacecraft', summary: 'Add a spacecraft with its first sheet', body: { schema: Sheet }, ok: { status: 201, description: 'Added.', schema: z.object({ spacecraft: z.object({ key: z.string() }) }) }, errors: [400, 401, 403, 409] },
    { method: 'get', route: '/api/spacecraft/[key]/sheets', tag: 'Spacecraft', summary: 'Sheet history', params: key, ok: { status: 200, description: 'Newest effective date first.', schema: z.object({ sheets: z.array(SheetRecord) }) }, errors: [401, 404] },
    {
      method: 'post', route: '/api/spacecraft/[key]/sheets', tag: 'Spacecraft', summary: 'Upload a sheet', description: 'Errors are keyed by JSON path. idealKtShifts lists loops whose ideal torque constant moves by more than 3 % against the previous sheet.',
      params: key, body: { schema: Sheet }, ok: { status: 201, description: 'Stored.', schema: z.object({ id: z.number().int(), effectiveFrom: z.string().datetime(), idealKtShifts: z.array(IdealKtShift) }) }, errors: [400, 401, 403, 404, 409],
    },
    { method: 'get', route: '/api/spacecraft/[key]/link', tag: 'Spacecraft', summary: 'Ground link: batches, sequence gaps, quarantine', params: key, ok: { status: 200, description: 'The link view.', schema: json('Recent ingest batches, open gaps and quarantined packets.') }, errors: [401, 404] },
    { method: 'get', route: '/api/spacecraft/[key]/tokens', tag: 'Ingest', summary: 'Ingest tokens of a spacecraft', params: key, ok: { status: 200, description: 'Newest first, never a hash.', schema: z.object({ tokens: z.array(json('A token: label, last four characters, use and revocation.')) }) }, errors: [401, 403, 404] },
    {
      method: 'post', route: '/api/spacecraft/[key]/tokens', tag: 'Ingest', summary: 'Create an ingest token', description: 'The clear token is in this answer only.',
      params: key, body: { schema: createTokenFormSchema }, ok: { status: 201, description: 'Created.', schema: z.object({ id: z.number().int(), token: z.string(), label: z.string(), spacecraft: z.string() }) }, errors: [400, 401, 403, 404],
    },
    { method: 'delete', route: '/api/spacecraft/[key]/tokens/[id]', tag: 'Ingest', summary: 'Revoke an ingest token', params: keyId, ok: { status: 200, description: 'Revoked.', schema: z.object({ revoked: z.number().int() }) }, errors: [401, 403, 404] },
    // Telemetry in.
    {
      method: 'post', route: '/api/ingest', tag: 'Ingest', summary: 'Post telemetry packets', security: 'ingest',
      description: 'A concatenation of space packets of the telemetry contract. Rejected packets are quarantined; a body in which no packet can be read is answered 400 with the report.',
      query: z.object({ station: stationKeySchema.optional().openapi({ description: 'The ground station the packets came through.' }) }),
      body: { schema: binary, type: 'application/octet-stream', description: 'Packets, back to back.' }, ok: { status: 200, description: 'The ingest report.', schema: IngestReport }, errors: [400, 401, 413],
    },
    { method: 'get', route: '/api/uploads', tag: 'Ingest', summary: 'Pass-file uploads', query: z.object({ spacecraft: spacecraftKeySchema.optional() }), ok: { status: 200, description: 'Newest first.', schema: z.object({ uploads: z.array(json('One upload with its report.')) }) }, errors: [401, 404] },
    {
      method: 'post', route: '/api/uploads/packets', tag: 'Ingest', summary: 'Upload a recorded pass file', description: 'Streamed to disk and ingested; the multipart field is `file`.',
      query: z.object({ spacecraft: spacecraftKeySchema, station: stationKeySchema.optional() }),
      body: { schema: { type: 'object', properties: { file: binary }, required: ['file'] }, type: 'multipart/form-data' }, ok: { status: 201, description: 'Stored and ingested.', schema: UploadReport }, errors: [400, 401, 403, 404, 413],
    },
    { method: 'post', route: '/api/uploads/[id]/reingest', tag: 'Ingest', summary: 'Ingest a stored upload again', params: idOnly, ok: { status: 200, description: 'The new report (duplicates counted).', schema: UploadReport }, errors: [401, 403, 404] },
    // Trips and jobs.
    { method: 'get', route: '/api/trips', tag: 'Trips', summary: 'List trips', query: tripQuerySchema, ok: { status: 200, description: 'One page of trips.', schema: z.object({ total: z.number().int(), page: z.number().int(), pageSize: z.number().int(), nextPage: z.number().int().nullable(), trips: z.array(json('One trip.')) }) }, errors: [400, 401] },
    { method: 'get', route: '/api/trips/[id]', tag: 'Trips', summary: 'One trip with its evidence', params: idOnly, ok: { status: 200, description: 'The trip.', schema: z.object({ trip: json('The trip and its evidence.') }) }, errors: [401, 404] },
    { method: 'post', route: '/api/trips/[id]/acknowledge', tag: 'Trips', summary: 'Acknowledge a trip', params: idOnly, body: { schema: acknowledgeInputSchema }, ok: { status: 200, description: 'Acknowledged.', schema: z.object({ trip: json('The trip.') }) }, errors: [400, 401, 403, 404, 409] },
    { method: 'post', route: '/api/trips/[id]/resolve', tag: 'Trips', summary: 'Resolve a trip with a conclusion', params: idOnly, body: { schema: resolveInputSchema }, ok: { status: 200, description: 'Resolved.', schema: z.object({ trip: json('The trip.') }) }, errors: [400, 401, 403, 404, 409] },
    { method: 'get', route: '/api/jobs', tag: 'Trips', summary: 'Job log', ok: { status: 200, description: 'Recent runs of the scheduled jobs.', schema: z.object({ runs: z.array(json('One job run.')) }) }, errors: [401, 403] },
    { method: 'post', route: '/api/jobs/run', tag: 'Trips', summary: 'Run all due work now: pass refresh, analysis and limits per spacecraft, one mail round', ok: { status: 200, description: 'What each part did.', schema: z.object({ passes: json('The pass refresh.'), jobs: z.array(json('One spacecraft’s analysis run.')), mail: json('The mail round.') }) }, errors: [401, 403] },
    {
      method: 'get', route: '/api/trips/[id]/evidence', tag: 'Trips', summary: 'Casefile evidence series of a trip', description: 'Downsampled (LTTB) to about `points` per series; the window defaults to around the trip.',
      params: idOnly, query: evidenceQuerySchema, ok: { status: 200, description: 'The evidence series.', schema: json('Series by evidence kind.') }, errors: [400, 401, 404],
    },
    { method: 'get', route: '/api/trips/[id]/evidence.csv', tag: 'Trips', summary: 'Evidence as CSV, one row per analysis window', params: idOnly, query: evidenceQuerySchema, ok: { status: 200, description: 'A CSV file.', type: 'text/csv', schema: { type: 'string' } }, errors: [400, 401, 404] },
    { method: 'get', route: '/api/trips/[id]/raw', tag: 'Trips', summary: 'Raw loop housekeeping of one analysis window', params: idOnly, query: rawQuerySchema, ok: { status: 200, description: 'The loop_sample rows.', schema: json('The window and its rows.') }, errors: [400, 401, 404] },
    { method: 'get', route: '/api/trips/[id]/notes', tag: 'Trips', summary: 'Casefile notes of a trip', params: idOnly, ok: { status: 200, description: 'The notes thread.', schema: z.object({ notes: z.array(json('One note with its attachments.')) }) }, errors: [401, 404] },
    {
      method: 'post', route: '/api/trips/[id]/notes', tag: 'Trips', summary: 'Add a Casefile note with attachments', description: 'Multipart: the text in `body` (see NoteInput), files (images, CSV, PDF) in `files`.',
      params: idOnly, body: { schema: { type: 'object', properties: { body: { type: 'string', maxLength: 4000 }, files: { type: 'array', items: binary } }, required: ['body'] }, type: 'multipart/form-data' },
      ok: { status: 201, description: 'Added.', schema: z.object({ note: json('The note.'), notes: z.array(json('One note.')) }) }, errors: [400, 401, 403, 404, 413],
    },
    {
      method: 'get', route: '/api/trips/[id]/attachments/[attachment]', tag: 'Trips', summary: 'One attachment of a Casefile note', description: 'Images show inline (?download=1 saves them); CSV and PDF always download.',
      params: idOnly.extend({ attachment: idParamSchema.openapi({ type: 'integer', description: 'Attachment id' }) }), query: z.object({ download: z.enum(['1']).optional() }),
      ok: { status: 200, description: 'The file as uploaded.', type: 'application/octet-stream', schema: binary }, errors: [401, 404],
    },
    { method: 'put', route: '/api/trips/[id]/conclusion', tag: 'Trips', summary: 'Save the Casefile conclusion draft', params: idOnly, body: { schema: conclusionInputSchema }, ok: { status: 200, description: 'Saved.', schema: z.object({ conclusion: json('The conclusion.') }) }, errors: [400, 401, 403, 404, 409] },
    // Limit sets and backtests.
    { method: 'get', route: '/api/limit-sets', tag: 'Limit sets', summary: 'Limit sets of a spacecraft', query: limitSetListQuerySchema, ok: { status: 200, description: 'Every version with its status.', schema: z.object({ spacecraft: z.string(), sets: z.array(json('One limit set summary.')) }) }, errors: [400, 401, 404] },
    { method: 'post', route: '/api/limit-sets', tag: 'Limit sets', summary: 'Start a draft', description: 'A copy of the active set, or of the set named by copyOf.', body: { schema: createDraftInputSchema }, ok: { status: 201, description: 'The new draft.', schema: z.object({ set: json('The limit set with its rules and review.') }) }, errors: [400, 401, 403, 404, 409] },
    { method: 'get', route: '/api/limit-sets/[id]', tag: 'Limit sets', summary: 'One limit set with its rules and review', params: idOnly, ok: { status: 200, description: 'The set.', schema: z.object({ set: json('The limit set with its rules and review.') }) }, errors: [401, 404] },
    {
      method: 'put', route: '/api/limit-sets/[id]', tag: 'Limit sets', summary: 'Edit a draft', description: 'Validated with the limit-set schema and the spacecraft’s loops; errors name the rule and field.',
      params: idOnly, body: { schema: LimitSetInput }, ok: { status: 200, description: 'Saved.', schema: z.object({ set: json('The limit set.') }) }, errors: [400, 401, 403, 404, 409],
    },
    { method: 'get', route: '/api/limit-sets/[id]/diff', tag: 'Limit sets', summary: 'Changes of a set against the active one', params: idOnly, ok: { status: 200, description: 'Rule by rule.', schema: json('The diff.') }, errors: [401, 404] },
    { method: 'post', route: '/api/limit-sets/[id]/submit', tag: 'Limit sets', summary: 'Submit a draft for review', params: idOnly, body: { schema: reviewCommentInputSchema }, ok: { status: 200, description: 'In review.', schema: z.object({ set: json('The limit set.') }) }, errors: [400, 401, 403, 404, 409] },
    {
      method: 'post', route: '/api/limit-sets/[id]/approve', tag: 'Limit sets', summary: 'Approve a set in review (a second engineer)', description: 'The approved set becomes active; the one it replaces is retired.',
      params: idOnly, body: { schema: reviewCommentInputSchema }, ok: { status: 200, description: 'Active.', schema: z.object({ set: json('The limit set.'), retired: json('The set retired, if any.').nullable() }) }, errors: [400, 401, 403, 404, 409],
    },
    { method: 'post', route: '/api/limit-sets/[id]/return', tag: 'Limit sets', summary: 'Return a set in review to its author', params: idOnly, body: { schema: returnInputSchema }, ok: { status: 200, description: 'Back to draft.', schema: z.object({ set: json('The limit set.') }) }, errors: [400, 401, 403, 404, 409] },
    { method: 'get', route: '/api/limit-sets/[id]/backtests', tag: 'Limit sets', summary: 'Backtests of a set', params: idOnly, ok: { status: 200, description: 'Newest first.', schema: z.object({ backtests: z.array(json('One backtest with progress and result.')) }) }, errors: [401, 403, 404] },
    {
      method: 'post', route: '/api/limit-sets/[id]/backtests', tag: 'Limit sets', summary: 'Start a backtest over history', description: 'Runs after the answer; poll GET /api/backtests/{id} for progress.',
      params: idOnly, body: { schema: backtestInputSchema }, ok: { status: 202, description: 'Queued.', schema: z.object({ backtest: json('The backtest.') }) }, errors: [400, 401, 403, 404, 409],
    },
    { method: 'get', route: '/api/backtests/[id]', tag: 'Limit sets', summary: 'One backtest: progress and result', params: idOnly, ok: { status: 200, description: 'The backtest.', schema: z.object({ backtest: json('The backtest.') }) }, errors: [401, 403, 404] },
    { method: 'post', route: '/api/backtests/[id]/cancel', tag: 'Limit sets', summary: 'Cancel a running backtest', params: idOnly, ok: { status: 200, description: 'Cancelled.', schema: z.object({ backtest: json('The backtest.') }) }, errors: [401, 403, 404, 409] },
    // Mail and on call.
    { method: 'get', route: '/api/outbox', tag: 'Mail', summary: 'The outbox', query: outboxQuerySchema, ok: { status: 200, description: 'Rows, counts per state, caution trips waiting for a digest.', schema: json('The outbox view.') }, errors: [400, 401, 403] },
    { method: 'get', route: '/api/mailbox', tag: 'Mail', summary: 'Mailbox (local demo only)', ok: { status: 200, description: 'Messages the local relay caught.', schema: z.object({ messages: z.array(json('One message.')) }) }, errors: [401, 403, 404] },
    { method: 'get', route: '/api/mailbox/[id]', tag: 'Mail', summary: 'One Mailbox message (local demo only)', params: z.object({ id: z.string() }), ok: { status: 200, description: 'Headers, text and HTML.', schema: json('The parsed message.') }, errors: [401, 403, 404] },
    { method: 'get', route: '/api/roster/[key]', tag: 'Mail', summary: 'On-call roster of a spacecraft', params: key, ok: { status: 200, description: 'Shifts from a day ago on, and who can be put on call.', schema: json('The roster view.') }, errors: [401, 404] },
    { method: 'post', route: '/api/roster/[key]', tag: 'Mail', summary: 'Put someone on call', params: key, body: { schema: createOnCallShiftInputSchema }, ok: { status: 201, description: 'Added.', schema: z.object({ id: z.number().int() }) }, errors: [400, 401, 403, 404, 409] },
    { method: 'delete', route: '/api/roster/[key]/[id]', tag: 'Mail', summary: 'Take a shift off the roster', params: keyId, ok: { status: 200, description: 'Removed.', schema: z.object({ removed: z.number().int() }) }, errors: [401, 403, 404] },
    // Passes and stations.
    { method: 'get', route: '/api/passes', tag: 'Passes', summary: 'Predicted passes in a window', query: passQuerySchema, ok: { status: 200, description: 'Passes overlapping the window, with what arrived in those begun.', schema: json('The window and its passes.') }, errors: [400, 401] },
    { method: 'get', route: '/api/stations', tag: 'Passes', summary: 'Ground stations', ok: { status: 200, description: 'Every station with its use.', schema: z.object({ stations: z.array(json('One ground station.')) }) }, errors: [401] },
    { method: 'post', route: '/api/stations', tag: 'Passes', summary: 'Add a ground station', description: 'Passes are recomputed in the same transaction.', body: { schema: createStationInputSchema }, ok: { status: 201, description: 'Added.', schema: json('The station and the upcoming pass count.') }, errors: [400, 401, 403, 409] },
    { method: 'patch', route: '/api/stations/[key]', tag: 'Passes', summary: 'Change a ground station', params: station, body: { schema: updateStationInputSchema }, ok: { status: 200, description: 'Changed.', schema: json('The station and the upcoming pass count.') }, errors: [400, 401, 403, 404] },
    { method: 'delete', route: '/api/stations/[key]', tag: 'Passes', summary: 'Delete a ground station nothing was received through', params: station, ok: { status: 200, description: 'Deleted.', schema: z.object({ deleted: z.string() }) }, errors: [401, 403, 404, 409] },
    {
      method: 'get', route: '/api/live/[key]', tag: 'Pass watch', summary: 'Live stream of one spacecraft (server-sent events)', description: 'Events `samples` (id = event number), `trip`, `trips`, `ready`, `reset`. A reconnecting client’s Last-Event-ID wins over `after`.',
      params: key, query: liveQuerySchema, ok: { status: 200, description: 'An event stream.', type: 'text/event-stream', schema: { type: 'string' } }, errors: [400, 401, 403, 404],
    },
    { method: 'get', route: '/api/pass-log/[key]', tag: 'Pass watch', summary: 'Pass log of the last day', params: key, ok: { status: 200, description: 'Passes with handover notes, trips handled and data received.', schema: json('The pass log.') }, errors: [401, 404] },
    { method: 'post', route: '/api/pass-log/[key]', tag: 'Pass watch', summary: 'Write a handover note on an ended pass', params: key, body: { schema: passNoteInputSchema }, ok: { status: 201, description: 'Written.', schema: z.object({ pass: json('The pass with its notes.') }) }, errors: [400, 401, 403, 404] },
    // This description.
    { method: 'get', route: '/api/openapi.json', tag: 'Docs', summary: 'This description (OpenAPI 3.0)', ok: { status: 200, description: 'The OpenAPI document.', schema: json('An OpenAPI 3.0 document.') }, errors: [401] },
  ];

  for (const op of ops) {
    const access = accessFor(op.route, op.method.toUpperCase());
    const security = op.security === 'ingest' ? [{ ingestToken: [] }] : access === 'public' ? [] : [{ session: [] }];
    const responses: RouteConfig['responses'] = {
      [op.ok.status]: { description: op.ok.description, ...(op.ok.schema ? { content: { [op.ok.type ?? 'application/json']: { schema: op.ok.schema } } } : {}) },
    };
    for (const status of op.errors ?? []) responses[status] = { description: ERROR_TEXT[status] ?? 'Error.', content: { 'application/json': { schema: ErrorEnvelope } } };
    r.registerPath({
      method: op.method,
      path: openApiPath(op.route),
      tags: [op.tag],
      summary: op.summary,
      description: [op.description, `Access: ${accessText(access)}.`].filter(Boolean).join('\n\n'),
      security,
      'x-access': access,
      request: {
        ...(op.params ? { params: op.params } : {}),
        ...(op.query ? { query: op.query } : {}),
        ...(op.body ? { body: { required: true, description: op.body.description, content: { [op.body.type ?? 'application/json']: { schema: op.body.schema } } } } : {}),
      },
      responses,
    });
  }
  return r;
}

let cached: OpenAPIObject | undefined;

/** The OpenAPI 3.0 document of the JSON API (built once per process). */
export function openApiDocument(): OpenAPIObject {
  cached ??= new OpenApiGeneratorV3(buildRegistry().definitions).generateDocument({
    openapi: '3.0.3',
    info: {
      title: 'Millrace API',
      version: '1',
      description:
        'The JSON API of Millrace, the ground-side health monitor for spacecraft that steer with liquid-metal momentum loops. Sign in with POST /api/auth/sign-in (the session cookie then authorises every call); telemetry ingest authorises with an ingest token instead. Errors share one envelope. Times are ISO 8601 UTC; units are SI and named in field names.',
    },
    servers: [{ url: '/' }],
    tags: ['Sign-in', 'Account', 'People', 'Spacecraft', 'Ingest', 'Trips', 'Limit sets', 'Mail', 'Passes', 'Pass watch', 'Docs'].map((name) => ({ name })),
  });
  return cached;
}

/** Every API route and method of the route table: "POST /api/trips/[id]/resolve". */
export function apiRoutesOfRouteTable(): string[] {
  const out: string[] = [];
  for (const [route, methods] of Object.entries(routeRules)) {
    if (!route.startsWith('/api/')) continue;
    for (const m of Object.keys(methods)) out.push(`${m} ${route}`);
  }
  return out.sort();
}

/** One line of a schema as the docs page lists it. */
export interface SchemaRow {
  depth: number;
  name: string;
  type: string;
  required: boolean;
  notes: string[];
  /** A component the row refers to, for a link. */
  ref: string | null;
}

function refName(ref: string): string {
  return ref.replace('#/components/schemas/', '');
}

function isRef(s: SchemaObject | ReferenceObject): s is ReferenceObject {
  return '$ref' in s;
}

function typeText(s: SchemaObject | ReferenceObject): string {
  if (isRef(s)) return refName(s.$ref);
  if (s.enum) return s.enum.map((v) => JSON.stringify(v)).join(' | ');
  if (s.type === 'array' && s.items) return `array of ${typeText(s.items)}`;
  if (s.oneOf) return 'one of';
  if (s.anyOf) return 'any of';
  if (s.allOf) return 'all of';
  const t = Array.isArray(s.type) ? s.type.join(' | ') : (s.type ?? 'any');
  return `${t}${s.format ? ` (${s.format})` : ''}${s.nullable ? ' or null' : ''}`;
}

function notesOf(s: SchemaObject): string[] {
  const n: string[] = [];
  if (s.description) n.push(s.description);
  if (s.minimum !== undefined) n.push(`≥ ${s.minimum}`);
  if (s.maximum !== undefined) n.push(`≤ ${s.maximum}`);
  if (s.exclusiveMinimum === true && s.minimum === undefined) n.push('> minimum');
  if (typeof s.exclusiveMinimum === 'number') n.push(`> ${s.exclusiveMinimum}`);
  if (s.minLength !== undefined) n.push(`at least ${s.minLength} characters`);
  if (s.maxLength !== undefined) n.push(`at most ${s.maxLength} characters`);
  if (s.minItems !== undefined) n.push(`at least ${s.minItems} items`);
  if (s.maxItems !== undefined) n.push(`at most ${s.maxItems} items`);
  if (s.pattern) n.push(`pattern ${s.pattern}`);
  if (s.default !== undefined) n.push(`default ${JSON.stringify(s.default)}`);
  if (s.example !== undefined) n.push(`e.g. ${JSON.stringify(s.example)}`);
  return n;
}

/** A schema flattened into indented rows (references are named, not expanded, so cycles cannot loop). */
export function schemaRows(schema: SchemaObject | ReferenceObject, name = '', required = true, depth = 0, out: SchemaRow[] = []): SchemaRow[] {
  if (depth > 12) return out;
  if (isRef(schema)) {
    out.push({ depth, name, type: refName(schema.$ref), required, notes: [], ref: refName(schema.$ref) });
    return out;
  }
  out.push({ depth, name, type: typeText(schema), required, notes: notesOf(schema), ref: null });
  if (schema.properties) {
    const req = new Set(schema.required ?? []);
    for (const [k, v] of Object.entries(schema.properties)) schemaRows(v, k, req.has(k), depth + 1, out);
  }
  if (schema.additionalProperties && typeof schema.additionalProperties === 'object') schemaRows(schema.additionalProperties, '{any key}', false, depth + 1, out);
  if (schema.type === 'array' && schema.items && !isRef(schema.items) && (schema.items.properties || schema.items.oneOf || schema.items.anyOf)) {
    schemaRows(schema.items, '[item]', true, depth + 1, out);
  }
  for (const [word, list] of [['option', schema.oneOf], ['option', schema.anyOf], ['part', schema.allOf]] as const) {
    list?.forEach((alt, i) => schemaRows(alt, `${word} ${i + 1}`, true, depth + 1, out));
  }
  return out;
}
