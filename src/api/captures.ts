/**
 * Typed calls for every capture route (DEVELOPERS.md, the routes): create, list, read, patch,
 * readings in and out, finish, analysis, comparison and the CSV export.
 */
import type { ConditionMismatch } from '../../shared/analysis/conditions';
import { ApiError, http, toApiError, type RequestOptions } from './http';
import { allPages } from './paging';
import type { CaptureCreate, CapturePatch, IngestResult, ReadingIn, StabilityKind } from '../../shared/protocol/captures';
import type { Summary } from '../../shared/analysis/summarize';
import type { NoiseType } from '../../shared/analysis/noise';
import type { BiasCorrection, NoiseSource } from '../../shared/analysis/stability';

export type { CaptureCreate, CapturePatch, IngestResult, ReadingIn, StabilityKind };

export type CaptureState = 'open' | 'stalled' | 'finished' | 'aborted';
export type CaptureQuantity = CaptureCreate['quantity'];
export type CaptureOrientation = NonNullable<CaptureCreate['orientation']>;

/** One point of a stored stability analysis. */
export interface StabilityPointOut {
  tau: number;
  m: number;
  dev: number;
  lo: number;
  hi: number;
  edf: number;
  n: number;
  noise?: NoiseType;
  /** The deviation before bias correction (absent in summaries stored before corrections existed). */
  devRaw?: number;
  noiseSource?: NoiseSource;
  /** Whether the identified noise agrees with the plotted slope; unsupported labels are not shown. */
  noiseSupported?: boolean;
  slope?: number | null;
  corrections?: BiasCorrection[];
  uncorrected?: string | null;
}

export interface StabilityOut {
  kind: StabilityKind;
  tau0?: number;
  points: StabilityPointOut[];
  skipped?: { m: number; reason: string }[];
}

export interface UncertaintyComponent {
  name: string;
  symbol: string;
  value: number;
  unit: string;
  distribution: string;
  sensitivity: number;
  contribution: number;
  dof: number | null;
  type: 'A' | 'B';
  note?: string;
  /** Where the line's model comes from (document and section). */
  source?: string;
  key?: string;
}

export interface UncertaintyOut {
  mean: number;
  components: UncertaintyComponent[];
  combined: number;
  effectiveDof: number | null;
  k: number;
  /** "k = 2.31 from ν_eff = 8, about 95 % coverage" (absent in summaries stored before issue 8). */
  coverage?: string;
  expanded: number;
  relativeExpanded: number | null;
  notes: string[];
}

export interface CaptureCounts {
  total: number;
  used: number;
  flagged: number;
  outliers: number;
}

export type DriftModel = 'none' | 'linear' | 'quadratic';

/** The drift found in a capture and what was removed (the server's summary.drift). */
export interface DriftOut {
  model?: DriftModel;
  removed?: boolean;
  ratePerDay?: number;
  rateStderrPerDay?: number;
  /** 'ppb/day' for frequency, '<unit>/day' otherwise. */
  rateUnit?: string;
  rateInUnit?: number;
  rateStderrInUnit?: number;
  [key: string]: unknown;
}

export interface GapOut {
  [key: string]: unknown;
}

export interface TemperatureOut {
  ambientC: number | null;
  normalizedPpm: number | null;
  t0: number;
}

export interface CorrectionOut {
  applied: boolean;
  referenceId: number | null;
  yRef: number;
  uRef: number | null;
  convention: string;
}

/** The cached reduction of a finished capture (the server's `summary`). */
export interface CaptureSummary {
  version?: number;
  counts: CaptureCounts;
  stats: Summary | null;
  correction: CorrectionOut;
  offsetPpm: number | null;
  temperature: TemperatureOut;
  drift: DriftOut | null;
  gaps: GapOut[];
  stability: StabilityOut;
  uncertainty: UncertaintyOut | null;
  notes: string[];
}

/** A capture as the API shows it. */
export interface Capture {
  id: number;
  /** When readings last arrived, when the stall sweep marked it, why and by whom it was aborted (issue 13). */
  lastReadingAt?: string | null;
  stalledAt?: string | null;
  abortReason?: string | null;
  abortedBy?: number | null;
  /** A sealed reading was updated or deleted after the capture finished (the seal route says more). */
  sealBroken?: boolean;
  sealSha256?: string | null;
  dutId: number;
  checkpointId: number;
  instrumentId: number | null;
  referenceId: number | null;
  operatorId: number | null;
  quantity: CaptureQuantity;
  unit: string;
  nominal: number | null;
  gateTime: number;
  deadTime: number | null;
  ambientC: number | null;
  orientation: CaptureOrientation | null;
  notes: string | null;
  tags: string[];
  referenceOffset: number | null;
  referenceUncertainty: number | null;
  /** Copied from the reference and the instrument when the capture started (issue 8). */
  referenceVerifiedAt?: string | null;
  referenceAgeingPerDay?: number | null;
  referenceAgeingUPerDay?: number | null;
  counterType?: 'gated' | 'reciprocal' | 'time-interval' | null;
  counterResolution?: number | null;
  linkProfile: Record<string, unknown> | null;
  state: CaptureState;
  startedAt: string;
  endedAt: string | null;
  readingCount: number;
  highestSeq: number;
  summary: CaptureSummary | null;
  /** Recorded from a simulator (set when the capture was created). */
  simulated?: boolean;
}

export interface CaptureDutRef {
  id: number;
  studyId: number;
  label: string;
  kind: string;
  nominal: number;
  unit: string;
  limit: number | null;
  limitLow?: number | null;
  limitHigh?: number | null;
  limitUnit: string;
  position: string | null;
  serial: string | null;
  tuningFork?: { T0: number; uT0: number; B: number; uB: number; defaults: boolean };
}

/** One capture with the names its page needs (study › checkpoint › DUT). */
export interface CaptureDetail extends Capture {
  study: { id: number; title: string; status: string } | null;
  dut: CaptureDutRef | null;
  checkpoint: { id: number; studyId: number; name: string; order: number; exposure: unknown } | null;
  operator: { id: number; name: string } | null;
  instrument: { id: number; name: string } | null;
  reference: { id: number; name: string } | null;
}

export interface CaptureListQuery {
  studyId?: number;
  dutId?: number;
  checkpointId?: number;
  state?: CaptureState;
  /** How many captures to fetch at most (newest first), over as many pages as that takes. */
  limit?: number;
}

/** A stored reading; `flags` only when non-zero. */
export interface ReadingOut {
  seq: number;
  t: number;
  value: number;
  flags?: number;
}

export interface ReadingsQuery {
  /** First seq (inclusive). */
  from?: number;
  /** Last seq (inclusive). */
  to?: number;
  /** Min/max decimation to about this many points (10…100 000). */
  maxPoints?: number;
}

export interface ReadingsPage {
  readings: ReadingOut[];
  decimated: boolean;
}

export interface AnalysisQuery {
  kind?: StabilityKind;
  taus?: 'octave' | 'decade' | 'all';
  confidence?: number;
  /** Drift removed before stability and the budget (server default: linear for frequency). */
  drift?: DriftModel;
}

export interface CaptureAnalysis {
  stats: Summary | null;
  correction: CorrectionOut;
  stability: StabilityOut;
  uncertainty: UncertaintyOut | null;
  offsetPpm: number | null;
  temperature: TemperatureOut;
  drift: DriftOut | null;
  /** The drift model this answer used. */
  driftModel?: DriftModel;
  counter?: { kind: string; resolution: number; assumed: boolean };
  gaps: GapOut[];
  counts: CaptureCounts;
  notes: string[];
}

export type Verdict = 'within' | 'exceeds' | 'inconclusive';

export interface Comparison {
  delta: number;
  deltaPpm: number | null;
  expandedUncertainty: number;
  k: number;
  /** ν_eff of Δ over both sides' lines and the shared terms. */
  effectiveDof?: number | null;
  coverage?: string;
  /** Δ's own budget: both sides' lines and the shared inputs (T0, B, reference ageing …). */
  budget?: UncertaintyOut;
  /** Symmetric ±limit, or null when the limit is asymmetric or one-sided. */
  limit: number | null;
  /** Bounds in the limit unit (null: open side). */
  limitLow?: number | null;
  limitHigh?: number | null;
  limitUnit: string;
  limitInUnit?: number | null;
  limitLowInUnit?: number | null;
  limitHighInUnit?: number | null;
  verdict: Verdict;
  significant: boolean;
  referenceCorrelated?: boolean;
  /** Recording conditions that differ between the two captures (reference, gate, instrument …). */
  conditions?: ConditionMismatch[];
  notes: string[];
  before: { id: number; mean: number; checkpointId: number; ambientC: number | null };
  after: { id: number; mean: number; checkpointId: number; ambientC: number | null };
  dut: CaptureDutRef;
  [key: string]: unknown;
}

function query(params: object): string {
  const q = new URLSearchParams();
  for (const [k, v] of Object.entries(params)) if (v !== undefined && v !== null) q.set(k, String(v));
  const s = q.toString();
  return s ? `?${s}` : '';
}

/** The server stores DOUBLE columns; pg may hand some back as strings. */
function numeric<T extends Capture>(c: T): T {
  return {
    ...c,
    id: Number(c.id),
    nominal: c.nominal === null ? null : Number(c.nominal),
    gateTime: Number(c.gateTime),
    readingCount: Number(c.readingCount ?? 0),
    highestSeq: Number(c.highestSeq ?? -1),
  };
}

export async function createCapture(body: CaptureCreate, options?: RequestOptions): Promise<Capture> {
  return numeric(await http.post<Capture>('/api/captures', body, options));
}

export async function listCaptures(filter: CaptureListQuery = {}, options?: RequestOptions): Promise<Capture[]> {
  const { limit, ...rest } = filter;
  const captures = await allPages<Capture>(`/api/captures${query(rest)}`, 'captures', limit ?? 2000, 200, options);
  return captures.map(numeric);
}

export async function getCapture(id: number, options?: RequestOptions): Promise<CaptureDetail> {
  return numeric(await http.get<CaptureDetail>(`/api/captures/${id}`, options));
}

export async function patchCapture(id: number, patch: CapturePatch, options?: RequestOptions): Promise<Capture> {
  return numeric(await http.patch<Capture>(`/api/captures/${id}`, patch, options));
}

/** How long one readings batch may wait for the server's answer before it counts as failed (ms). */
export const READINGS_TIMEOUT_MS = 30_000;

/**
 * Sends one batch (≤ 20 000 readings); the server ignores seqs it already holds. Without a
 * caller's signal it gives up after {@link READINGS_TIMEOUT_MS}, so a half-open connection
 * becomes a failure the uploader retries instead of a request that hangs forever.
 */
export function postReadings(id: number, readings: ReadingIn[], options: RequestOptions = {}): Promise<IngestResult> {
  const signal = options.signal ?? AbortSignal.timeout(READINGS_TIMEOUT_MS);
  return http.post<IngestResult>(`/api/captures/${id}/readings`, { readings }, { ...options, signal });
}

/** The index of the one bad reading a 400 refusal of a batch names (`details.index`), else null. */
export function refusedReadingIndex(err: unknown): number | null {
  if (!(err instanceof ApiError) || err.status !== 400) return null;
  const index = err.context?.index;
  return typeof index === 'number' && Number.isInteger(index) && index >= 0 ? index : null;
}

export async function finishCapture(id: number, options?: RequestOptions): Promise<Capture> {
  return numeric(await http.post<Capture>(`/api/captures/${id}/finish`, {}, options));
}

export function getReadings(id: number, q: ReadingsQuery = {}, options?: RequestOptions): Promise<ReadingsPage> {
  return http.get<ReadingsPage>(`/api/captures/${id}/readings${query(q)}`, options);
}

export function getAnalysis(id: number, q: AnalysisQuery = {}, options?: RequestOptions): Promise<CaptureAnalysis> {
  return http.get<CaptureAnalysis>(`/api/captures/${id}/analysis${query(q)}`, options);
}

export function getComparison(before: number, after: number, options?: RequestOptions): Promise<Comparison> {
  return http.get<Comparison>(`/api/comparisons${query({ before, after })}`, options);
}

/**
 * The capture's own CSV (needs the Bearer token: use {@link downloadReadingsCsv} from a page): its
 * metadata as `# key: value` lines, then raw and reference-corrected readings (issue 12).
 * `/api/captures/:id/readings.csv` stays as the bare machine-readable table.
 */
export function readingsCsvPath(id: number): string {
  return `/api/captures/${id}/export.csv`;
}

/** Fetches the CSV export with the session token and returns it as a Blob. */
export async function fetchReadingsCsv(id: number, token: string | null, signal?: AbortSignal): Promise<Blob> {
  const response = await fetch(readingsCsvPath(id), {
    headers: token ? { Authorization: `Bearer ${token}` } : {},
    signal,
  });
  if (!response.ok) {
    let body: unknown;
    try {
      body = await response.json();
    } catch {
      body = undefined;
    }
    throw toApiError(response.status, body);
  }
  return response.blob();
}

/** Downloads the CSV export as `driftbench-capture-<id>.csv` (browser only). */
export async function downloadReadingsCsv(id: number, token: string | null): Promise<void> {
  const blob = await fetchReadingsCsv(id, token);
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = `driftbench-capture-${id}.csv`;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}
