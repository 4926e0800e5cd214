/**
 * An analysis worker thread: computes `GET /api/captures/:id/analysis` off the server's event
 * loop, with the same functions the API used in-process (captureAnalysis.ts). It keeps each
 * capture's readings between jobs and, for an open capture, loads only what arrived since — so a
 * viewer polling a million-reading capture costs one small query per poll, not a full reload.
 */
import { parentPort, workerData } from 'node:worker_threads';
import os from 'node:os';
import pg from 'pg';
import { openDatabase } from '../db/connection.js';
import { initModels, Capture, Dut } from '../models/index.js';
import { AppError, NotFoundError } from '../errors.js';
import { AnalysisError } from '../../shared/analysis/index.js';
import {
  defaultDrift,
  finishSummary,
  prepare,
  reduce,
  stabilityOf,
  withDrift,
  SUMMARY_VERSION,
  type CaptureSummary,
} from '../services/captureAnalysis.js';
import { loadSeries, type Series } from '../services/readings.js';
import { sealOfSliced } from '../services/seal.js';
import { implausibleNote } from '../../shared/protocol/plausibility.js';
import type {
  AnalysisJob,
  FinishJob,
  FinishResult,
  JobError,
  WorkerReply,
  WorkerRequest,
} from './protocol.js';

const { databaseUrl, primaryUrl, nice } = workerData as {
  databaseUrl: string;
  primaryUrl?: string;
  nice?: number;
};

// Analysis is background work: an analysis worker runs at a lower CPU priority (nice 10), so on
// a busy machine the event loop (ingest, live fan-out) and PostgreSQL always come first. The
// finish worker keeps the server's priority (pool.ts, Lane). On Linux the priority of pid 0 is
// the calling thread's own; elsewhere the call may be refused, which changes nothing.
if (nice)
  try {
    os.setPriority(0, nice);
  } catch {
    // Not permitted here: the worker keeps the process's priority.
  }
const db = openDatabase(databaseUrl, { poolMax: 2 });
initModels(db.sequelize);

interface Held {
  series: Series;
  count: number;
}
/** Readings of the captures analysed lately, by capture id (a few, by recent use). */
const held = new Map<number, Held>();
const HELD_MAX = 4;

function concat<T extends Int32Array | Float64Array | Int16Array>(a: T, b: T): T {
  const out = new (a.constructor as new (n: number) => T)(a.length + b.length);
  out.set(a);
  out.set(b, a.length);
  return out;
}

/**
 * The capture's readings in seq order. In one snapshot, reads the capture's count and the readings
 * above the highest one held; when the two do not add up (a resend filled an earlier gap), reloads
 * everything in the same snapshot.
 */
async function seriesOf(captureId: number): Promise<Held> {
  const client = await db.pool.connect();
  try {
    await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY');
    const countRes = await client.query<{ reading_count: number }>(
      'SELECT reading_count FROM captures WHERE id = $1',
      [captureId],
    );
    const count = countRes.rows[0]?.reading_count ?? 0;
    const prev = held.get(captureId);
    // In pages, in this transaction's snapshot (loadSeries): a 10 M-reading capture never sits
    // in memory as ten million row arrays.
    const read = (after: number) => loadSeries(client, captureId, after + 1);
    let next: Held;
    if (prev && prev.count === count) next = prev;
    else {
      const last =
        prev && prev.series.seq.length ? prev.series.seq[prev.series.seq.length - 1] : -1;
      const fresh = prev ? await read(last) : null;
      if (prev && fresh && prev.count + fresh.seq.length === count) {
        next = {
          count,
          series: {
            seq: concat(prev.series.seq, fresh.seq),
            t: concat(prev.series.t, fresh.t),
            value: concat(prev.series.value, fresh.value),
            flags: concat(prev.series.flags, fresh.flags),
          },
        };
      } else {
        const all = await read(-1);
        next = { series: all, count: all.seq.length };
      }
    }
    await client.query('COMMIT');
    held.delete(captureId);
    held.set(captureId, next);
    if (held.size > HELD_MAX) held.delete(held.keys().next().value!);
    return next;
  } catch (err) {
    await client.query('ROLLBACK').catch(() => {});
    throw err;
  } finally {
    client.release();
  }
}

/** The analysis as the API answers it (the same figures and rules as the in-process route). */
async function analyse(job: AnalysisJob): Promise<{ result: unknown; readingCount: number }> {
  const c = await Capture.findByPk(job.captureId);
  if (!c) throw new NotFoundError('Capture');
  const dut = await Dut.findByPk(c.dutId);
  const drift = job.drift ?? defaultDrift(c);
  const stored = c.summary as CaptureSummary | null;
  const custom = drift !== defaultDrift(c);
  const useStored =
    c.state !== 'open' && !!stored && (stored.version ?? 0) >= SUMMARY_VERSION && !custom;
  const defaultStability = job.kind === 'oadev' && job.taus === 'octave' && !job.confidence;
  let summary: CaptureSummary;
  let prepared = null;
  let readingCount = c.readingCount;
  if (useStored && defaultStability) summary = stored!;
  else {
    const { series, count } = await seriesOf(c.id);
    readingCount = count;
    prepared = prepare(c, series);
    summary = useStored ? stored! : reduce(c, dut, prepared, custom ? { drift } : {});
    if (!useStored) {
      const note = implausibleNote(series.flags);
      if (note) summary = { ...summary, notes: [...summary.notes, note] };
    }
  }
  const stability = defaultStability
    ? summary.stability
    : stabilityOf(withDrift(prepared!, drift, []).prepared, job.kind, job.taus, job.confidence);
  return {
    readingCount,
    result: {
      stats: summary.stats,
      correction: summary.correction,
      stability,
      uncertainty: summary.uncertainty,
      offsetPpm: summary.offsetPpm,
      temperature: summary.temperature,
      drift: summary.drift,
      driftModel: drift,
      counter: summary.counter,
      gaps: summary.gaps,
      counts: summary.counts,
      notes: summary.notes,
    },
  };
}

function asJobError(err: unknown): JobError {
  if (err instanceof AppError)
    return {
      type: 'app',
      status: err.status,
      code: err.code,
      message: err.message,
      details: err.details,
    };
  if (err instanceof AnalysisError)
    return { type: 'analysis', code: err.code, message: err.message };
  const e = err as { code?: unknown; message?: unknown };
  return {
    type: 'internal',
    code: typeof e?.code === 'string' ? e.code : 'internal',
    message: String(e?.message ?? err),
  };
}

/** Where finishes read: the primary (their snapshot is the primary's), opened on first use. */
let primary: pg.Pool | undefined;
function primaryPool(): pg.Pool {
  if (!primaryUrl || primaryUrl === databaseUrl) return db.pool;
  primary ??= new pg.Pool({ connectionString: primaryUrl, max: 1 });
  return primary;
}

/** What `pg_export_snapshot()` returns (hex groups and dashes); anything else is refused. */
const SNAPSHOT_ID = /^[0-9A-F]+(-[0-9A-F]+)+$/i;

/**
 * A finish's or an abort's work, here instead of on the server's event loop (issue 15: reading a
 * 10^7-reading capture, its summary and its seal held that loop for seconds). The readings are
 * read in the finishing transaction's exported snapshot, so they are exactly those finish would
 * have read itself after locking the capture. The capture and DUT are rebuilt from their
 * attributes as finish read them (the capture already marked finished), so the figures are those
 * of the in-thread computation.
 */
async function finishOf(job: FinishJob): Promise<FinishResult> {
  if (!SNAPSHOT_ID.test(job.snapshot)) throw new Error('finish job: not a snapshot id');
  const t0 = performance.now();
  let series: Series;
  const client = await primaryPool().connect();
  try {
    await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY');
    await client.query(`SET TRANSACTION SNAPSHOT '${job.snapshot}'`);
    series = await loadSeries(client, job.captureId);
    await client.query('COMMIT');
  } catch (err) {
    await client.query('ROLLBACK').catch(() => {});
    throw err;
  } finally {
    client.release();
  }
  const t1 = performance.now();
  let json = '';
  if (job.summary) {
    const capture = Capture.build(job.summary.capture as never, { isNewRecord: false, raw: true });
    const dut = job.summary.dut
      ? Dut.build(job.summary.dut as never, { isNewRecord: false, raw: true })
      : null;
    json = JSON.stringify(await finishSummary(capture, dut, series));
  }
  const t2 = performance.now();
  // In slices (1.4 MB of serialisation at a time), not one 22-bytes-a-reading buffer.
  const seal = await sealOfSliced(series);
  const n = series.seq.length;
  return {
    json,
    readingCount: n,
    highestSeq: n ? series.seq[n - 1] : -1,
    seal,
    ms: { read: t1 - t0, summary: t2 - t1, seal: performance.now() - t2 },
  };
}

/** Answers job `id` with what `work` resolves to, or with the error it fails with. */
function reply(
  id: number,
  work: Promise<Omit<Extract<WorkerReply, { ok: true }>, 'id' | 'ok'>>,
): void {
  work.then(
    (answer) => parentPort!.postMessage({ id, ok: true, ...answer } satisfies WorkerReply),
    (err) =>
      parentPort!.postMessage({ id, ok: false, error: asJobError(err) } satisfies WorkerReply),
  );
}

parentPort!.on('message', (msg: WorkerRequest) => {
  if ('finish' in msg)
    reply(
      msg.id,
      finishOf(msg.finish).then((finish) => ({
        json: '',
        readingCount: finish.readingCount,
        finish,
      })),
    );
  else
    reply(
      msg.id,
      analyse(msg.job).then(({ result, readingCount }) => ({
        json: JSON.stringify(result),
        readingCount,
      })),
    );
});
