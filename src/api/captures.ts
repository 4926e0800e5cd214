/**
 * Typed calls for every capture route (DEVELOPERS.md, the routes): create, list, read, patch,
 * readings in and out, finish, analysis, comparison and the CSV export.
 */
import type { z } from 'zod';
import { callRoute, fetchBlob, queryString, type RequestOptions } from './http';
import { allPages } from './paging';
import type {
  AnalysisQuery as AnalysisQuerySchema,
  CaptureCreate,
  CaptureListFilter,
  CapturePatch,
  ReadingIn,
  ReadingsQuery as ReadingsQuerySchema,
  StabilityKind,
} from '../../shared/protocol/captures';
import type { IngestResponse, ReadingsPage } from '../../shared/protocol/responses';
import type {
  BudgetLine,
  BudgetWire,
  CaptureAnalysis,
  CaptureDetail,
  CaptureListItem,
  CaptureRecord,
  CaptureState,
  CaptureSummary,
  ComparisonWire,
  DriftModel,
  DriftWire,
  DutRecord,
  ReadingWire,
  StabilityPointWire,
  StabilityWire,
  Verdict,
} from '../../shared/protocol/models';

// Every shape below is the contract's (shared/protocol); these names are what pages import.
export type { CaptureCreate, CapturePatch, ReadingIn, StabilityKind, ReadingsPage };
export type {
  CaptureAnalysis,
  CaptureDetail,
  CaptureListItem,
  CaptureState,
  CaptureSummary,
  DriftModel,
  Verdict,
};
export type IngestResult = IngestResponse;
export type Capture = CaptureRecord;
export type CaptureQuantity = CaptureRecord['quantity'];
export type CaptureOrientation = NonNullable<CaptureCreate['orientation']>;
export type StabilityPointOut = StabilityPointWire;
export type StabilityOut = StabilityWire;
export type UncertaintyComponent = BudgetLine;
export type UncertaintyOut = BudgetWire;
export type DriftOut = DriftWire;
export type CaptureDutRef = DutRecord;
export type Comparison = ComparisonWire;
export type ReadingOut = ReadingWire;

/** The list's filter, and how many captures to fetch at most (newest first) over as many pages as that takes. */
export type CaptureListQuery = CaptureListFilter & { limit?: number };

/** `?from&to&maxPoints` of GET /api/captures/:id/readings (first and last seq inclusive). */
export type ReadingsQuery = Partial<z.output<typeof ReadingsQuerySchema>>;
/** `?kind&taus&confidence&drift` of GET /api/captures/:id/analysis. */
export type AnalysisQuery = Partial<z.output<typeof AnalysisQuerySchema>>;

export async function createCapture(
  body: CaptureCreate,
  options?: RequestOptions,
): Promise<Capture> {
  return callRoute('POST /api/captures', {}, { ...options, body });
}

/** Captures with the names a list shows (study, DUT, checkpoint, operator), joined by the server. */
export async function listCaptures(
  filter: CaptureListQuery = {},
  options?: RequestOptions,
): Promise<CaptureListItem[]> {
  const { limit, ...rest } = filter;
  return allPages<CaptureListItem>(
    `/api/captures${queryString(rest)}`,
    'captures',
    limit ?? 2000,
    200,
    options,
  );
}

export async function getCapture(id: number, options?: RequestOptions): Promise<CaptureDetail> {
  return callRoute('GET /api/captures/:id', { id }, options);
}

export async function patchCapture(
  id: number,
  patch: CapturePatch,
  options?: RequestOptions,
): Promise<Capture> {
  return callRoute('PATCH /api/captures/:id', { id }, { ...options, body: patch });
}

// Readings in (the uploader's one call) live in ./readings, which needs no DOM (Node tests use it).
export { READINGS_TIMEOUT_MS, postReadings, refusedReadingIndex } from './readings';

export async function finishCapture(id: number, options?: RequestOptions): Promise<Capture> {
  return callRoute('POST /api/captures/:id/finish', { id }, options);
}

export function getReadings(
  id: number,
  q: ReadingsQuery = {},
  options?: RequestOptions,
): Promise<ReadingsPage> {
  return callRoute('GET /api/captures/:id/readings', { id }, { ...options, query: q });
}

export function getAnalysis(
  id: number,
  q: AnalysisQuery = {},
  options?: RequestOptions,
): Promise<CaptureAnalysis> {
  return callRoute('GET /api/captures/:id/analysis', { id }, { ...options, query: q });
}

export function getComparison(
  before: number,
  after: number,
  options?: RequestOptions,
): Promise<Comparison> {
  return callRoute('GET /api/comparisons', {}, { ...options, query: { before, after } });
}

/**
 * The capture's own CSV (needs the Bearer token: `downloadReadingsCsv` in ./workbench saves it): its
 * metadata as `# key: value` lines, then raw and reference-corrected readings (issue 12).
 * `/api/captures/:id/readings.csv` stays as the bare machine-readable table.
 */
export function readingsCsvPath(id: number): string {
  return `/api/captures/${id}/export.csv`;
}

/** Fetches the CSV export with the session token and returns it as a Blob. */
export async function fetchReadingsCsv(
  id: number,
  token: string | null,
  signal?: AbortSignal,
): Promise<Blob> {
  return fetchBlob(readingsCsvPath(id), token, signal);
}
