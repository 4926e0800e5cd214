/**
 * The study page's data: the plan (checkpoints with their exposure, DUTs with their limits), the
 * matrix of captures and verdicts, the planning calls, and the small pure helpers the page and
 * its tests share (exposure summaries, cell figures, counts, form messages).
 */
import type { z } from 'zod';
import { callRoute } from './http';
import { getStudy, updateStudySettings } from './studies';
import type {
  CheckpointRecord,
  DutRecord,
  StudyDetail,
  StudyMatrix as StudyMatrixWire,
  Verdict,
} from '../../shared/protocol/models';
import type { CheckpointCreate, DutCreate, Exposure } from '../../shared/protocol/api';
import type { DutPatch } from '../../shared/protocol/uncertainty';
import { groupDigits } from '../utils/format';
import { formatSigned } from '../utils/si';
import { tiltCellView } from '../utils/tiltCell';

export type { CheckpointCreate, DutCreate, Exposure };
// The shapes are the contract's (shared/protocol/models.ts); these names are what the study page imports.
export type { Verdict };
export type PlanCheckpoint = CheckpointRecord;
export type PlanDut = DutRecord;
export type StudyPlan = StudyDetail;
export type StudyMatrix = StudyMatrixWire;
export type MatrixCell = StudyMatrixWire['rows'][number]['cells'][number];
export type CellCapture = NonNullable<MatrixCell['capture']>;
export type CellComparison = NonNullable<MatrixCell['comparison']>;

/** The study with its checkpoints and DUTs (GET /api/studies/:id, one call in src/api/studies.ts). */
export const getStudyPlan = getStudy;
export { updateStudySettings };

export function getStudyMatrix(id: number): Promise<StudyMatrix> {
  return callRoute('GET /api/studies/:id/matrix', { id });
}

export function addCheckpoint(studyId: number, body: CheckpointCreate): Promise<PlanCheckpoint> {
  return callRoute('POST /api/studies/:id/checkpoints', { id: studyId }, { body });
}

export function addDut(studyId: number, body: DutCreate): Promise<PlanDut> {
  return callRoute('POST /api/studies/:id/duts', { id: studyId }, { body });
}

/** PATCH /api/duts/:id: the limit (±, asymmetric or one-sided), tuning-fork parameters, label, position, serial. */
export async function updateDut(id: number, patch: DutPatch): Promise<PlanDut> {
  return (await callRoute('PATCH /api/duts/:id', { id }, { body: patch })).dut;
}

/** Checkpoints in their planned order (ties by id, as the server orders them). */
export function inOrder<T extends { order: number; id: number }>(checkpoints: readonly T[]): T[] {
  return [...checkpoints].sort((a, b) => a.order - b.order || a.id - b.id);
}

function plain(value: number): string {
  return Number(value.toPrecision(6)).toString();
}

/** Exposure wording by process kind lives in utils/exposure.ts; re-exported for the pages that read it here. */
export { exposureSummary } from '../utils/exposure';

export const DUT_KIND_LABELS: Record<string, string> = {
  crystal: 'Crystal',
  oscillator: 'Oscillator module',
  'tuning-fork': 'Tuning-fork crystal',
  tcxo: 'TCXO',
  accelerometer: 'Accelerometer',
  capacitor: 'Capacitor',
  relay: 'Relay or switch',
  other: 'Other',
};

export function kindLabel(kind: string): string {
  return DUT_KIND_LABELS[kind] ?? kind;
}

/** "±1 ppm", "±20 mg". */
export function limitText(
  dut: Pick<PlanDut, 'limit' | 'limitUnit' | 'limitLow' | 'limitHigh'>,
): string {
  if (dut.limit != null) return `±${plain(dut.limit)} ${dut.limitUnit}`;
  const lo = dut.limitLow ?? null;
  const hi = dut.limitHigh ?? null;
  if (lo === null && hi === null) return '—';
  if (lo === null) return `≤ +${plain(hi!)} ${dut.limitUnit}`;
  if (hi === null) return `≥ ${plain(lo)} ${dut.limitUnit}`;
  return `${plain(lo)} / +${plain(hi)} ${dut.limitUnit}`;
}

/** "32 768 Hz", "16 000 000 Hz". */
export function nominalText(dut: Pick<PlanDut, 'nominal' | 'unit'>): string {
  return `${groupDigits(dut.nominal)} ${dut.unit}`;
}

/** Decimals that show a figure to about a tenth of its uncertainty. */
function decimalsFor(u: number): number {
  if (!(u > 0) || !Number.isFinite(u)) return 3;
  return Math.max(1, Math.min(5, Math.ceil(-Math.log10(u)) + 1));
}

export interface CellFigures {
  /** Δ, U and L in one display unit, for the glyph. */
  delta: number;
  expanded: number;
  /** Symmetric half-width, or null when low/high carry an asymmetric or one-sided limit. */
  limit: number | null;
  low: number | null;
  high: number | null;
  unit: string;
  /** "k = 2.31 from ν_eff = 8, about 95 % coverage" when the server gave it. */
  coverage: string | null;
  k: number;
  /** "+2.503 ppm" — signed. */
  deltaText: string;
  /** "±0.021 ppm". */
  expandedText: string;
}

/**
 * A compared cell in the DUT's limit unit when that is relative (ppm/ppb, via the nominal),
 * otherwise in the quantity's own unit (Hz, mg …) with the limit converted by the server.
 */
export function cellFigures(dut: PlanDut, c: CellComparison): CellFigures {
  const relative = c.limitUnit === 'ppm' || c.limitUnit === 'ppb';
  let delta: number;
  let expanded: number;
  let limit: number | null;
  let low: number | null;
  let high: number | null;
  let unit: string;
  const givenLow = c.limitLow !== undefined ? c.limitLow : c.limit === null ? null : -c.limit;
  const givenHigh = c.limitHigh !== undefined ? c.limitHigh : c.limit;
  if (relative && dut.nominal > 0) {
    const scale = c.limitUnit === 'ppm' ? 1e6 : 1e9;
    delta =
      c.deltaPpm !== null && c.limitUnit === 'ppm' ? c.deltaPpm : (c.delta / dut.nominal) * scale;
    expanded = (c.expandedUncertainty / dut.nominal) * scale;
    limit = c.limit;
    low = givenLow ?? null;
    high = givenHigh ?? null;
    unit = c.limitUnit;
  } else {
    delta = c.delta;
    expanded = c.expandedUncertainty;
    limit = c.limitInUnit ?? c.limit;
    low = c.limitLowInUnit !== undefined ? c.limitLowInUnit : limit === null ? null : -limit;
    high = c.limitHighInUnit !== undefined ? c.limitHighInUnit : limit;
    unit = dut.unit;
  }
  const d = decimalsFor(expanded);
  return {
    delta,
    expanded,
    limit,
    low,
    high,
    unit,
    coverage: c.coverage ?? null,
    k: c.k ?? 2,
    deltaText: `${formatSigned(delta, d)} ${unit}`,
    expandedText: `±${Math.abs(expanded).toFixed(d)} ${unit}`,
  };
}

export interface VerdictTally {
  within: number;
  exceeds: number;
  inconclusive: number;
}

/** The kinds of verdict a matrix cell can show, in the order the tally names them. */
export const TALLY_KINDS = ['change', 'stability', 'tilt'] as const;
export type TallyKind = (typeof TALLY_KINDS)[number];
export const TALLY_KIND_LABELS: Record<TallyKind, string> = {
  change: 'Δ from baseline',
  stability: 'stability limit',
  tilt: 'tilt check',
};

const VERDICT_WORDS = ['within', 'exceeds', 'inconclusive'] as const;

/** Every verdict the matrix shows (all kinds together), the same per kind, and the empty cells. */
export interface MatrixCounts extends VerdictTally {
  notCaptured: number;
  byKind: Record<TallyKind, VerdictTally>;
}

/**
 * Counts each verdict the matrix draws once: a cell's change from the baseline, its crystal's
 * stability limit, and each axis quantity (offset, sensitivity) of its tilt check that has a limit.
 */
export function matrixCounts(matrix: StudyMatrix): MatrixCounts {
  const tally = (): VerdictTally => ({ within: 0, exceeds: 0, inconclusive: 0 });
  const byKind: Record<TallyKind, VerdictTally> = {
    change: tally(),
    stability: tally(),
    tilt: tally(),
  };
  let notCaptured = 0;
  for (const row of matrix.rows) {
    for (const cell of row.cells) {
      if (!cell.capture) notCaptured++;
      else if (cell.comparison) byKind.change[cell.comparison.verdict]++;
      if (cell.stability) byKind.stability[cell.stability.verdict]++;
      if (cell.tiltCheck) {
        for (const axis of tiltCellView(cell.tiltCheck)) {
          for (const q of [axis.offset, axis.sensitivity]) if (q.verdict) byKind.tilt[q.verdict]++;
        }
      }
    }
  }
  const total = tally();
  for (const kind of TALLY_KINDS) {
    for (const v of VERDICT_WORDS) total[v] += byKind[kind][v];
  }
  return { ...total, notCaptured, byKind };
}

/** A zod issue as a short sentence for a form field. */
function friendly(issue: z.core.$ZodIssue): string {
  const i = issue as z.core.$ZodIssue & {
    minimum?: number | bigint;
    maximum?: number | bigint;
    inclusive?: boolean;
    origin?: string;
    expected?: string;
  };
  switch (i.code) {
    case 'invalid_type':
      return i.expected === 'number' ? 'Enter a number' : 'Fill this in';
    case 'too_small':
      if (i.origin === 'string') return 'Fill this in';
      return i.inclusive ? `Use ${i.minimum} or more` : `Use a number above ${i.minimum}`;
    case 'too_big':
      if (i.origin === 'string') return `Keep it to ${i.maximum} characters`;
      return `Use ${i.maximum} or less`;
    case 'invalid_value':
      return 'Choose one of the listed values';
    default:
      return issue.message;
  }
}

/** Field path ("exposure.bathKHz") → its first message, or {} when the value is valid. */
export function fieldErrors<T>(
  schema: z.ZodType<T>,
  value: unknown,
  /** Field-specific wording for a missing or unusable value, e.g. { label: 'Give the DUT a label' }. */
  wording: Record<string, string> = {},
): { data: T | null; errors: Record<string, string> } {
  const result = schema.safeParse(value);
  if (result.success) return { data: result.data, errors: {} };
  const errors: Record<string, string> = {};
  for (const issue of result.error.issues) {
    const path = issue.path.map(String).join('.') || 'form';
    errors[path] ??= wording[path] ?? friendly(issue);
  }
  return { data: null, errors };
}

/** A form's text field as a number: blank → undefined, otherwise Number (NaN is reported as "Enter a number"). */
export function numberField(text: string): number | undefined {
  const t = text.trim().replace(',', '.');
  return t === '' ? undefined : Number(t);
}

/** A form's text field as optional text. */
export function textField(text: string): string | undefined {
  const t = text.trim();
  return t === '' ? undefined : t;
}
