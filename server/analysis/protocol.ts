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

export type WorkerRequest = { id: number; job: AnalysisJob };
/** `json`: the answer already serialised in the worker, so the event loop never stringifies it. */
export type WorkerReply =
  | { id: number; ok: true; json: string; readingCount: number }
  | { id: number; ok: false; error: JobError };
