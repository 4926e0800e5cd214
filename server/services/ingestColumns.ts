import { ValidationError } from '../errors.js';
import { findBadReading, type ReadingIn } from '../../shared/protocol/captures.js';
import type { PlausibilityWindow } from '../../shared/protocol/plausibility.js';
import { ReadingFlag } from '../../shared/protocol/reading.js';
import { decodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';

/**
 * The CPU part of an ingest before the database (server/services/ingest.ts): the body as four
 * columns, their seq range and order, and the plausibility flags. Pure and synchronous, so
 * `npm run bench -- ingestCpu` times exactly what the ingest runs per reading. Nothing here
 * allocates per reading: four arrays sized once per batch (number[], which the statement's binary
 * parameters and the COPY rows read directly; typed arrays sized per batch measured slower, their
 * buffers costing more to allocate than the arrays they replace).
 */
export interface BatchColumns {
  seqs: number[];
  ts: number[];
  values: number[];
  flags: number[];
  /** The lowest and highest seq (−1 for both when the batch is empty). */
  minSeq: number;
  maxSeq: number;
  /** Whether every seq is above the one before it. */
  increasing: boolean;
}

/**
 * A readings body — `{ readings: [...] }` parsed from JSON, or the compact binary one
 * (shared/protocol/readingsBinary.ts, a Buffer from the raw body parser) — as columns, or a
 * {@link ValidationError} naming the first bad reading.
 */
export function batchColumns(body: unknown): BatchColumns {
  let seqs: number[];
  let ts: number[];
  let values: number[];
  let flags: number[];
  if (Buffer.isBuffer(body)) {
    const cols = decodeReadingsF64(body);
    if ('reason' in cols) {
      throw new ValidationError(
        cols.index >= 0 ? `reading ${cols.index}: ${cols.reason}` : cols.reason,
        { index: cols.index, reason: cols.reason },
      );
    }
    ({ seq: seqs, t: ts, value: values, flags } = cols);
  } else {
    const readings = (body as { readings?: unknown } | null)?.readings;
    const bad = findBadReading(readings);
    if (bad) {
      throw new ValidationError(
        bad.index >= 0 ? `readings[${bad.index}]: ${bad.reason}` : bad.reason,
        { index: bad.index, reason: bad.reason },
      );
    }
    const list = readings as ReadingIn[];
    const k = list.length;
    seqs = new Array<number>(k);
    ts = new Array<number>(k);
    values = new Array<number>(k);
    flags = new Array<number>(k);
    for (let i = 0; i < k; i++) {
      const r = list[i];
      seqs[i] = r.seq;
      ts[i] = r.t;
      values[i] = r.value;
      flags[i] = r.flags ?? 0;
    }
  }
  const n = seqs.length;
  let maxSeq = -1;
  let minSeq = n > 0 ? Number.MAX_SAFE_INTEGER : -1;
  let increasing = true;
  for (let i = 0; i < n; i++) {
    const seq = seqs[i];
    if (i > 0 && seq <= seqs[i - 1]) increasing = false;
    if (seq < minSeq) minSeq = seq;
    if (seq > maxSeq) maxSeq = seq;
  }
  return { seqs, ts, values, flags, minSeq, maxSeq, increasing };
}

/**
 * Sets the implausible bit (shared/protocol/plausibility.ts) on each reading the capture's window
 * refuses; readings the link already flagged are stored as they came and not judged. Implausible
 * values are stored with their flag, so one absurd number never blocks the analysis or the finish.
 */
export function flagImplausible(
  judge: PlausibilityWindow,
  values: readonly number[],
  flags: number[],
): void {
  for (let i = 0; i < values.length; i++)
    if (flags[i] === 0 && !judge.check(values[i])) flags[i] |= ReadingFlag.implausible;
}
