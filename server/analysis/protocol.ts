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

/** The readings of a capture as finish loaded them, moved (not copied) between threads. */
export interface SeriesArrays {
  seq: Int32Array;
  t: Float64Array;
  value: Float64Array;
  flags: Int16Array;
}

/**
 * A finish's summary (issue 15): the capture's and its DUT's attributes as plain data (rebuilt
 * as model instances in the worker, so prepare/reduce see what finish saw) and the readings
 * finish loaded in its transaction. The worker moves the readings back with its answer.
 */
export interface FinishJob {
  capture: Record<string, unknown>;
  dut: Record<string, unknown> | null;
  series: SeriesArrays;
}

export type WorkerRequest = { id: number; job: AnalysisJob } | { id: number; finish: FinishJob };
/**
 * `json`: the answer already serialised in the worker, so the event loop never stringifies it.
 * `series`: a finish's readings, handed back.
 */
export type WorkerReply =
  | { id: number; ok: true; json: string; readingCount: number; series?: SeriesArrays }
  | { id: number; ok: false; error: JobError };
