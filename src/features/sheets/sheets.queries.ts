import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { SpacecraftSheet } from '../../lib/spacecraft-sheet.schema';

/** One stored sheet as GET /api/spacecraft/{key}/sheets sends it. */
export interface SheetRow {
  id: number;
  effective_from: string;
  sheet: SpacecraftSheet;
  uploaded_at: string;
  uploaded_by: string | null;
}

export type SheetsResponse = { sheets: SheetRow[] };

/** A loop whose ideal torque constant moves by more than the warning fraction. */
export interface IdealKtShift {
  loopId: number;
  before: number;
  after: number;
  change: number;
}

export interface SheetCreated {
  id: number;
  effectiveFrom: string;
  idealKtShifts: IdealKtShift[];
}

/** The sheets of one spacecraft, newest effective date first. */
export const sheetsQuery = (key: string) =>
  queryOptions({
    queryKey: ['sheets', key],
    queryFn: () => http<SheetsResponse>(`/api/spacecraft/${encodeURIComponent(key)}/sheets`),
  });

/** Store a new sheet; the server validates it and answers 400 with fields keyed by JSON path. */
export function postSheet(key: string, sheet: unknown): Promise<SheetCreated> {
  return http<SheetCreated>(`/api/spacecraft/${encodeURIComponent(key)}/sheets`, { method: 'POST', json: sheet });
}

/** The sheet in force at `at`: the latest effective at or before it, else the earliest. */
export function sheetInForce(sheets: readonly SheetRow[], at: string): SheetRow | undefined {
  let best: SheetRow | undefined;
  for (const s of sheets) if (s.effective_from <= at && (!best || s.effective_from > best.effective_from)) best = s;
  return best ?? [...sheets].sort((a, b) => a.effective_from.localeCompare(b.effective_from))[0];
}
