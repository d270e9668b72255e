import type { Insertable } from 'kysely';
import type { Database, TripState } from '../../src/lib/server/db/schema';

/** What a test says of a trip it writes straight into the table. */
export interface TripSeed {
  spacecraftId: number;
  loop: number | null;
  kind: string;
  quantity: string;
  level: 'caution' | 'warning';
  state: TripState;
  onset: Date;
}

/**
 * A trip row for tests that read trips as stored (how trips are raised is the engine's tests'
 * business): a high-side trip of limit-set version 1, raised `raisedAfterMs` after its onset; the
 * figures and evidence come from `rest`.
 */
export function tripRow(
  s: TripSeed,
  raisedAfterMs: number,
  rest: Pick<Insertable<Database['trip']>, 'value' | 'peak_value' | 'limit_value' | 'last_value' | 'evidence'> & Partial<Insertable<Database['trip']>>,
): Insertable<Database['trip']> {
  return {
    spacecraft_id: s.spacecraftId,
    loop_id: s.loop,
    kind: s.kind,
    quantity: s.quantity,
    level: s.level,
    side: 'high',
    state: s.state,
    limit_set_version: 1,
    onset_at: s.onset,
    raised_at: new Date(s.onset.getTime() + raisedAfterMs),
    last_at: s.onset,
    ...rest,
  };
}
