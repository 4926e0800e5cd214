import type { DriftModel } from '../../shared/analysis/index.js';
import type { StabilityKind } from '../../shared/protocol/captures.js';

/** What the API asks an analysis worker for: one capture's analysis with the query's options. */
export interface AnalysisJob {
  captureId: number;
  kind: StabilityKind;
  taus: 'octave' | 'decade' | 'all';
  confidence?: number;
  drift?: DriftModel;
}

/** An error a worker reports so the API can answer as it would have in-process. */
export interface JobError {
  /** 'app' keeps status and code (AppError); 'analysis' is an AnalysisError (422). */
  type: 'app' | 'analysis' | 'internal';
  status?: number;
  code: string;
  message: string;
  details?: unknown;
}

/**
 * A finish's or an abort's work on a large capture (issue 15), done wholly in a worker: it reads
 * the readings itself, in the finishing transaction's snapshot (`pg_export_snapshot()`, taken
 * after the capture was locked), so the event loop neither parses the COPY stream nor holds the
 * arrays; then the summary (finish only) and the seal. `summary`: the capture's and its DUT's
 * attributes as plain data (rebuilt as model instances in the worker, so prepare/reduce see what
 * finish saw); absent for an abort, which stores only the seal.
 */
export interface FinishJob {
  captureId: number;
  snapshot: string;
  summary?: { capture: Record<string, unknown>; dut: Record<string, unknown> | null };
}

/** What a finish job gives back: all the finish stores, and none of the readings. */
export interface FinishResult {
  /** The summary's JSON text; '' for an abort. */
  json: string;
  readingCount: number;
  /** The highest seq read, −1 for none. */
  highestSeq: number;
  /** SHA-256 (hex) of the canonical serialisation (server/services/seal.ts). */
  seal: string;
  /** Where the time went in the worker, in ms (read = COPY + parse, summary, seal). */
  ms: { read: number; summary: number; seal: number };
}

export type WorkerRequest = { id: number; job: AnalysisJob } | { id: number; finish: FinishJob };
/** `json`: the answer already serialised in the worker, so the event loop never stringifies it. */
export type WorkerReply =
  | { id: number; ok: true; json: string; readingCount: number; finish?: FinishResult }
  | { id: number; ok: false; error: JobError };
