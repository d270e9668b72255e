import { sql, type Kysely } from 'kysely';

// Sheets are now refused when a rounded-rectangle loop has a corner radius of 0 or less (that is
// not a rounded rectangle, and its centreline would turn on the spot). Sheets stored before may
// have one, and every reading of them would then fail. This migration changes no sheet (an
// engineer's sheet is not ours to rewrite): it stops with the spacecraft and effective times of
// any such sheet, so that they are corrected before the new rules run.
export async function up(db: Kysely<any>): Promise<void> {
  const bad = await sql<{ key: string; effective_from: Date; loop_id: number }>`
    SELECT s.key, h.effective_from, (l ->> 'id')::int AS loop_id
    FROM spacecraft_sheet h
    JOIN spacecraft s ON s.id = h.spacecraft_id
    CROSS JOIN LATERAL jsonb_array_elements(h.sheet -> 'loops') AS l
    WHERE l -> 'shape' ->> 'kind' = 'rounded-rectangle' AND (l -> 'shape' ->> 'cornerRadius_m')::float8 <= 0
    ORDER BY s.key, h.effective_from`.execute(db);
  if (bad.rows.length) {
    const list = bad.rows.map((r) => `${r.key} from ${r.effective_from.toISOString()} loop ${r.loop_id}`).join('; ');
    throw new Error(
      `Stored sheets with a corner radius of 0 or less: ${list}. Set each to the loop's real corner radius ` +
        `(greater than 0, at most half the smaller side) in spacecraft_sheet.sheet, then migrate again.`,
    );
  }
}

export async function down(): Promise<void> {
  // nothing was changed
}
