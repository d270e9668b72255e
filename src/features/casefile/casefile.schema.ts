import { z } from 'zod';

/** The widest span one evidence request covers, days. */
export const MAX_SPAN_DAYS = 31;
/** Default number of points per downsampled series. */
export const DEFAULT_POINTS = 800;

const blankToUndefined = (v: unknown) => (v === '' || v === null ? undefined : v);
const instant = z.preprocess(
  blankToUndefined,
  z.string().datetime({ offset: true, message: 'Give an ISO 8601 time with a zone, e.g. 2026-12-01T00:00:00Z.' }).optional(),
);

/** The evidence charts a Casefile can show; the permalink lists the selected ones in `show`. */
export const EVIDENCE_KEYS = ['effectiveness', 'drift', 'scatter', 'compensation', 'pressure', 'heating', 'spectrum', 'waterfall', 'ledger'] as const;
export type EvidenceKey = (typeof EVIDENCE_KEYS)[number];

/**
 * GET /api/trips/[id]/evidence (and .csv), the report and the Casefile's permalink: ?from=&to=&points=&loop=.
 * Either end of the span may be left out (it defaults around the trip); the span itself is checked
 * by `spanProblem` once both ends are known.
 */
export const evidenceQuerySchema = z.object({
  from: instant,
  to: instant,
  points: z.preprocess(blankToUndefined, z.coerce.number().int('points must be a whole number').min(20, 'points must be at least 20').max(5000, 'points must be at most 5000').default(DEFAULT_POINTS)),
  loop: z.preprocess(blankToUndefined, z.coerce.number().int('loop must be a whole number').min(0, 'loop must be 0–3').max(3, 'loop must be 0–3').optional()),
});
export type EvidenceQuery = z.infer<typeof evidenceQuerySchema>;

/** Which end of a span a problem is blamed on, and what is wrong. */
export interface SpanProblem {
  field: 'from' | 'to';
  message: string;
}

/**
 * What is wrong with a span, or null: it must run forward and cover at most MAX_SPAN_DAYS. `given`
 * says which ends the caller wrote; the problem is put on an end the caller gave (the later one when
 * both were given), so a span that defaulted on one side blames the side that was asked for.
 */
export function spanProblem(fromMs: number, toMs: number, given: { from: boolean; to: boolean }): SpanProblem | null {
  const blame: 'from' | 'to' = given.to || !given.from ? 'to' : 'from';
  if (!Number.isFinite(fromMs)) return { field: 'from', message: '"from" is not a time: give an ISO 8601 time with a zone, e.g. 2026-12-01T00:00:00Z.' };
  if (!Number.isFinite(toMs)) return { field: 'to', message: '"to" is not a time: give an ISO 8601 time with a zone, e.g. 2026-12-01T00:00:00Z.' };
  const iso = (ms: number) => new Date(ms).toISOString().slice(0, 16).replace('T', ' ');
  if (!(toMs > fromMs)) return { field: blame, message: `"to" (${iso(toMs)} UTC) must be after "from" (${iso(fromMs)} UTC).` };
  const days = (toMs - fromMs) / 86_400_000;
  if (days > MAX_SPAN_DAYS) {
    const hint = !given.to ? ' Give a later "from", or a "to" as well.' : !given.from ? ' Give an earlier "to", or a "from" as well.' : '';
    return { field: blame, message: `A span is at most ${MAX_SPAN_DAYS} days; ${iso(fromMs)} – ${iso(toMs)} UTC is ${days.toFixed(1)} days.${hint}` };
  }
  return null;
}

/** The Casefile page's query string: the evidence query plus the selected charts and raw window. */
export const permalinkSchema = z.object({
  show: z.preprocess(
    blankToUndefined,
    z
      .string()
      .transform((s) => s.split(',').filter((k): k is EvidenceKey => (EVIDENCE_KEYS as readonly string[]).includes(k)))
      .optional(),
  ),
  raw: instant,
});

/** GET /api/trips/[id]/raw?window=ISO&loop=N: the loop_sample rows of one analysis window. */
export const rawQuerySchema = z.object({
  window: z.string({ required_error: 'window is required: the ISO 8601 time of a window' }).datetime({ offset: true, message: 'window must be an ISO 8601 time with a zone' }),
  loop: z.preprocess(blankToUndefined, z.coerce.number().int().min(0, 'loop must be 0–3').max(3, 'loop must be 0–3').optional()),
});
export type RawQuery = z.infer<typeof rawQuerySchema>;

/** A note's text (the multipart field `body`). */
export const noteInputSchema = z.object({
  body: z.string().trim().min(1, 'Write the note: what you looked at and what you found.').max(4000, 'at most 4000 characters'),
});
export type NoteInput = z.infer<typeof noteInputSchema>;

/** PUT /api/trips/[id]/conclusion. */
export const conclusionInputSchema = z.object({
  conclusion: z.string().trim().min(3, 'Write the conclusion: what it was and what was done.').max(4000, 'at most 4000 characters'),
});
export type ConclusionInput = z.infer<typeof conclusionInputSchema>;

/**
 * POST /api/trips/[id]/resolve: the conclusion may come with the request (it is saved to the
 * Casefile first) or be the one saved before; `resolution` is the older name of the same field.
 */
export const resolveWithConclusionSchema = z.object({
  conclusion: z.string().trim().max(4000, 'at most 4000 characters').optional(),
  resolution: z.string().trim().max(4000, 'at most 4000 characters').optional(),
});

/** Attachment types a note accepts, with the file name endings each may carry. */
export const ATTACHMENT_TYPES = {
  'image/png': ['.png'],
  'image/jpeg': ['.jpg', '.jpeg'],
  'text/csv': ['.csv'],
  'application/pdf': ['.pdf'],
} as const;
export type AttachmentType = keyof typeof ATTACHMENT_TYPES;
/** Largest attachment, bytes. */
export const MAX_ATTACHMENT_BYTES = 20 * 1024 * 1024;
/** Most attachments on one note. */
export const MAX_ATTACHMENTS_PER_NOTE = 5;

/** Who does what on a Casefile; written on the page and enforced in the endpoints. */
export const CASEFILE_ROLE_RULE =
  'Everyone signed in reads a Casefile; analysts and engineers add notes; resolving follows the resolve rule.';
/** Roles that add notes to a Casefile. */
export const NOTE_ROLES = ['analyst', 'engineer'] as const;
/** True when the roles may add a note. */
export function mayAddNote(roles: readonly string[]): boolean {
  return roles.some((r) => (NOTE_ROLES as readonly string[]).includes(r));
}

// ── Evidence as the endpoint returns it ─────────────────────────────────────────────────────

/** A downsampled series: times (Unix s), values and, where the figure has one, its standard error. */
export interface Series {
  t: number[];
  y: number[];
  e?: number[];
}

/** Limit levels of one quantity in the limit set that raised the trip. */
export interface LimitLevels {
  cautionHigh: number | null;
  warningHigh: number | null;
  cautionLow: number | null;
  warningLow: number | null;
}

/** Columns whose mean over the span's last windows the report and readings quote. */
export const RECENT_KEYS = ['effectiveness', 'compensated_effectiveness', 'pressure_effectiveness', 'resistance_ohm'] as const;
export type RecentKey = (typeof RECENT_KEYS)[number];
/** Windows in the "recent" period: the last windows of the span, and the recent period of the scatter. */
export const RECENT_WINDOWS = 10;

/** The mean of one column over the last (up to RECENT_WINDOWS) windows of the span with a value. */
export interface RecentMean {
  mean: number | null;
  /** How many windows the mean is over. */
  windows: number;
  /** First and last window start of those, Unix s. */
  from: number | null;
  to: number | null;
}

/** A scatter period: per-sample (current, fluid torque, magnet temperature) and the period's kT. */
export interface ScatterPeriod {
  from: number;
  to: number;
  windows: number;
  samples: number;
  current_a: number[];
  torque_nm: number[];
  magnetTemp_c: number[];
  /** Inverse-variance mean of the windows' fitted kT, N·m/A, and its standard error. */
  kT: number | null;
  kTStdErr: number | null;
}

/** One spectrum: frequency bins, Hz, and PSD, unit²/Hz. */
export interface Spectrum {
  freq_hz: number[];
  psd: number[];
  peaks: { frequency_hz: number; amplitude: number }[];
  bandPower: number;
}

export interface EvidenceResponse {
  tripId: number;
  spacecraft: string;
  loopId: number;
  loops: number[];
  windowS: number;
  points: number;
  /** The span (ISO) and the default span around the trip. */
  span: { from: string; to: string; defaultFrom: string; defaultTo: string };
  onset: {
    /** The estimated onset (ISO): for a drift trip the step change point before the detector's signal, else the limit's. */
    at: string;
    method: 'cusum' | 'limit';
    /** Where the limit engine put it (first window of the run that raised the trip). */
    limitAt: string;
    /** When the detector signalled (ISO), if it did. */
    signalAt: string | null;
    signalMethod: 'ewma' | 'cusum' | null;
  };
  baseline: {
    source: 'drift-baseline' | 'before-onset' | 'none';
    from: number | null;
    to: number | null;
    n: number;
    mean: number | null;
    sd: number | null;
    required: number;
  };
  /**
   * The downward CUSUM against two kinds of level: the limit rule of the trip's limit set (which raises
   * trips) and the onset detector's decision interval h (which only dates the onset). Times Unix s,
   * from the full rows of the span.
   */
  cusum: {
    /** The onset detector's decision interval h, σ. */
    detectorH_sigma: number;
    /** Caution and warning levels (≥) of the trip's limit set for drift_cusum_lo, σ; null where it has none. */
    caution_sigma: number | null;
    warning_sigma: number | null;
    limitSetVersion: number;
    peakLo: { value: number; t: number } | null;
    peakHi: { value: number; t: number } | null;
    /** First window of the span at or above each level (null: not reached in the span). */
    firstAtDetector: number | null;
    firstAtCaution: number | null;
    firstAtWarning: number | null;
  };
  /** Means over the last RECENT windows of the span with a value, from the full rows (not the downsampled series). */
  recent: Record<RecentKey, RecentMean>;
  /** The momentum-ledger residual |τ_ext| over the span's windows (full rows), N·m. */
  ledger: { windows: number; mean_nm: number | null; max_nm: number | null };
  limitSetVersion: number;
  limits: Record<string, LimitLevels>;
  series: Record<string, Series>;
  scatter: {
    kind: 'per-sample';
    baseline: ScatterPeriod | null;
    recent: ScatterPeriod | null;
    idealKt: number | null;
  };
  pulsation: {
    channel: 0;
    unit: 'Pa';
    baseline: (Spectrum & { bursts: number; source: 'baseline-period' | 'earliest' }) | null;
    latest: (Spectrum & { t: number }) | null;
    /** Bursts in the span: times (Unix s), a common frequency grid, log10 PSD rows. */
    waterfall: { t: number[]; freq_hz: number[]; log10psd: number[][] } | null;
  };
  readings: Record<EvidenceKey, string>;
  windows: number;
}

/** GET /api/trips/[id]/raw. */
export interface RawWindowResponse {
  loopId: number;
  window: { from: string; to: string };
  rows: {
    t: string;
    time_tag: number;
    seq: number;
    status: number;
    commanded_current_a: number;
    measured_current_a: number;
    electrode_voltage_v: number;
    flow_velocity_m_s: number;
    pressure_rise_pa: number;
    fluid_temp_c: number;
    electrode_temp_c: number;
    magnet_temp_c: number;
  }[];
}

/** A note with its attachments as the API returns it. */
export interface CasefileNote {
  id: number;
  body: string;
  author: string | null;
  createdAt: string;
  attachments: { id: number; fileName: string; mediaType: AttachmentType; bytes: number; url: string }[];
}
