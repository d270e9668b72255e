import type { Kysely, Transaction } from 'kysely';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { spacecraftSheetSchema, sheetIssuesByPath, type SpacecraftSheet } from '../spacecraft-sheet.schema';
import { idealTorqueConstant } from '../physics/pump';
import { insertSheet } from './spacecraft';
import { insertAuditEntry } from './audit';
import { forgetLoopIds } from './ingest';
import { timeTagOf } from './analysis-store';

/** A change of a loop's ideal torque constant beyond this fraction is called out. */
export const IDEAL_KT_WARNING_FRACTION = 0.03;

/** The sheets of a spacecraft, newest effective date first. */
export async function listSheets(db: Kysely<Database>, spacecraftId: number) {
  const rows = await db
    .selectFrom('spacecraft_sheet as s')
    .leftJoin('app_user as u', 'u.id', 's.uploaded_by')
    .select(['s.id', 's.effective_from', 's.sheet', 's.uploaded_at', 'u.name as uploaded_by'])
    .where('s.spacecraft_id', '=', spacecraftId)
    .orderBy('s.effective_from', 'desc')
    .execute();
  return rows.map((r) => ({ ...r, sheet: r.sheet as SpacecraftSheet }));
}

/** Per-loop ideal torque constants of a sheet, N·m/A. */
export function idealConstants(sheet: SpacecraftSheet): Record<number, number> {
  return Object.fromEntries(sheet.loops.map((l) => [l.id, idealTorqueConstant(l)]));
}

/**
 * Validate and store a new sheet for a spacecraft; reports ideal-kT shifts against the previous sheet.
 * `opts.inTransaction` runs after the sheet is stored, in the same transaction (what depends on the sheet).
 */
export async function addSheet(
  db: Kysely<Database>,
  sc: { id: number; key: string },
  body: unknown,
  actorId: string,
  opts: { inTransaction?: (trx: Transaction<Database>) => Promise<unknown> } = {},
) {
  const parsed = spacecraftSheetSchema.safeParse(body);
  if (!parsed.success) throw new HttpError('BAD_REQUEST', 'The sheet has errors; see fields (JSON paths).', sheetIssuesByPath(parsed.error));
  const sheet = parsed.data;
  if (sheet.spacecraft.key !== sc.key) {
    throw new HttpError('BAD_REQUEST', 'The sheet is for another spacecraft.', { 'spacecraft.key': [`must be ${sc.key} for this spacecraft (got ${sheet.spacecraft.key})`] });
  }
  const previous = (await listSheets(db, sc.id)).find((s) => s.effective_from < new Date(sheet.effectiveFrom));
  const shifts: { loopId: number; before: number; after: number; change: number }[] = [];
  if (previous) {
    const before = idealConstants(previous.sheet);
    for (const [id, after] of Object.entries(idealConstants(sheet))) {
      const b = before[Number(id)];
      if (b !== undefined && Math.abs(after / b - 1) > IDEAL_KT_WARNING_FRACTION) shifts.push({ loopId: Number(id), before: b, after, change: after / b - 1 });
    }
  }
  const id = await db.transaction().execute(async (trx) => {
    const exists = await trx
      .selectFrom('spacecraft_sheet')
      .select('id')
      .where('spacecraft_id', '=', sc.id)
      .where('effective_from', '=', new Date(sheet.effectiveFrom))
      .executeTakeFirst();
    if (exists) throw new HttpError('CONFLICT', `A sheet effective from ${sheet.effectiveFrom} is already on record.`, { effectiveFrom: ['another sheet takes effect at this exact time; choose a different time'] });
    const newId = await insertSheet(trx, sc.id, sheet, actorId);
    const reanalyse = await markForReanalysis(trx, sc.id, new Date(sheet.effectiveFrom));
    await insertAuditEntry(trx, {
      actorId,
      action: 'sheet.add',
      targetType: 'spacecraft',
      targetId: sc.key,
      detail: { sheetId: newId, effectiveFrom: sheet.effectiveFrom, idealKtShifts: shifts, batchesToReanalyse: reanalyse },
    });
    await opts.inTransaction?.(trx);
    return newId;
  });
  forgetLoopIds(sc.id);
  return { id, effectiveFrom: sheet.effectiveFrom, idealKtShifts: shifts };
}

/**
 * A sheet that takes effect in the past governs data already analysed under the sheet before it:
 * the ingest batches holding samples from its effective time up to the next sheet's are handed
 * back to the analysis job, which analyses their windows again under the sheet now in force
 * (windows are replaced, drift statistics recomputed, limits judged again from there). Returns how
 * many batches were handed back.
 */
export async function markForReanalysis(trx: Transaction<Database>, spacecraftId: number, effectiveFrom: Date): Promise<number> {
  const next = await trx
    .selectFrom('spacecraft_sheet')
    .select('effective_from')
    .where('spacecraft_id', '=', spacecraftId)
    .where('effective_from', '>', effectiveFrom)
    .orderBy('effective_from')
    .limit(1)
    .executeTakeFirst();
  const tag = (d: Date) => timeTagOf(d.getTime() / 1000);
  let q = trx
    .updateTable('ingest_batch')
    .set({ analysed_at: null, analysis_attempts: 0, analysis_error: null })
    .where('spacecraft_id', '=', spacecraftId)
    .where('last_time_tag', '>=', tag(effectiveFrom));
  if (next) q = q.where('first_time_tag', '<', tag(next.effective_from));
  const r = await q.executeTakeFirst();
  return Number(r.numUpdatedRows);
}
