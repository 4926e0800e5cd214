import type { AuthUser } from './auth.js';
import type pg from 'pg';
import { Capture, Dut } from '../models/index.js';
import { AppError, ForbiddenError, NotFoundError } from '../errors.js';
import { isRecording } from '../../shared/protocol/captureLifecycle.js';
import type { LiveHub } from './liveHub.js';
import { canWriteCapture } from './ingest.js';
import { loadSeries } from './readings.js';
import { finishSummary } from './captureAnalysis.js';
import type { AnalysisPool } from '../analysis/pool.js';
import { capturePublic } from './captures.js';
import { assertStudyWritable } from './studyLock.js';
import { sealOfSliced } from './seal.js';
import { auditWithClient } from './audit.js';

/** Lets the event loop serve what waits before the next heavy synchronous step. */
const turn = () => new Promise<void>((resolve) => setImmediate(resolve));

/**
 * Below this many readings (the capture's count as ingest kept it) a finish or an abort reads and
 * computes on the event loop: about 20 ms at most (1 s per 10^6 readings measured), less than
 * handing the work to a worker that may first have to start.
 */
export const FINISH_IN_WORKER_MIN = 20_000;

/** What finish and abort store of a capture's readings. */
export interface Sealed {
  /** The summary's JSON text (finish), or '' (abort). */
  json: string;
  readingCount: number;
  highestSeq: number;
  seal: string;
}

/**
 * The readings' summary (finish; prepare + reduce, AnalysisError explained) and seal, read in
 * `client`'s transaction after it locked the capture. With the app's pool and at least
 * FINISH_IN_WORKER_MIN readings, all of it runs in the pool's finish worker, which reads the rows
 * itself in this transaction's exported snapshot (pg_export_snapshot: exactly the rows a read here
 * would see), so the event loop neither parses the COPY stream nor computes (issue 15: about 9 s
 * of it at 10^7 readings, and 230 ms at 10^6 for the read alone). On this thread, with a turn of
 * the event loop between the heavy steps, for a small capture, without a pool (the demo story
 * calls finish without one) or when it is closed, and when the worker fails.
 */
export async function readAndSeal(
  client: pg.PoolClient,
  id: number,
  expected: number,
  analysis: AnalysisPool | undefined,
  summary?: { capture: Capture; dut: Dut | null },
): Promise<Sealed> {
  if (analysis?.available && expected >= FINISH_IN_WORKER_MIN) {
    // Not in a savepoint: PostgreSQL exports no snapshot from a subtransaction.
    const snapshot = (await client.query<{ s: string }>('SELECT pg_export_snapshot() AS s')).rows[0]
      .s;
    try {
      return await analysis.finish({
        captureId: id,
        snapshot,
        ...(summary
          ? {
              summary: {
                capture: summary.capture.get({ plain: true }),
                dut: summary.dut ? summary.dut.get({ plain: true }) : null,
              },
            }
          : {}),
      });
    } catch (err) {
      if (err instanceof AppError) throw err;
      // The worker failed: the same work on this thread below.
    }
  }
  const series = await loadSeries(client, id);
  let json = '';
  if (summary) {
    await turn();
    json = JSON.stringify(await finishSummary(summary.capture, summary.dut, series, turn));
  }
  // The seal: SHA-256 of the raw readings in the canonical serialisation (seal.ts).
  const seal = await sealOfSliced(series);
  const n = series.seq.length;
  return { json, readingCount: n, highestSeq: n ? series.seq[n - 1] : -1, seal };
}

/**
 * Closes a capture: from then on it takes no readings. Computes and caches its summary
 * (statistics, correction, stability, uncertainty budget) once; the chart tiles are kept by ingest. Finishing a
 * finished capture returns it unchanged. `analysis`: the pool whose worker computes the summary.
 */
export async function finishCapture(
  pool: pg.Pool,
  hub: LiveHub,
  user: AuthUser,
  id: number,
  analysis?: AnalysisPool,
) {
  await assertStudyWritable('capture', id, 'finishing a capture');
  const client = await pool.connect();
  let changed = false;
  try {
    await client.query('BEGIN');
    const lock = await client.query<{
      state: string;
      operator_id: number | null;
      reading_count: number;
    }>('SELECT state, operator_id, reading_count FROM captures WHERE id = $1 FOR UPDATE', [id]);
    if (lock.rowCount === 0) throw new NotFoundError('Capture');
    if (!canWriteCapture(user, lock.rows[0].operator_id))
      throw new ForbiddenError("Only the capture's operator, a lead or an admin may finish it.");
    const from = lock.rows[0].state;
    if (from === 'aborted')
      throw new AppError(
        409,
        'capture-aborted',
        'This capture was aborted: it cannot be finished.',
      );
    if (isRecording(from)) {
      const capture = (await Capture.findByPk(id))!;
      const dut = await Dut.findByPk(capture.dutId);
      capture.state = 'finished';
      const done = await readAndSeal(client, id, lock.rows[0].reading_count, analysis, {
        capture,
        dut,
      });
      // No tile rebuild: every statement that adds readings has already merged them into the
      // capture's tiles (the trigger of migrations 0110/0230/0300, or the ingest's own merge of a
      // COPY), and readings are never changed or deleted while the capture lives, so the tiles
      // are already exactly what a rebuild from the rows would give (tests/helpers/tiles.ts
      // checks that in the ingest tests). Rebuilding them was the largest part of a finish.
      await client.query(
        `UPDATE captures SET state = 'finished', ended_at = now(), updated_at = now(), summary = $2::jsonb,
           reading_count = $3, highest_seq = $4, seal_sha256 = $5, sealed_at = now() WHERE id = $1`,
        [id, done.json, done.readingCount, done.highestSeq, done.seal],
      );
      await auditWithClient(client, user.id, 'capture.finish', 'capture', id, {
        state: { from, to: 'finished' },
        readings: done.readingCount,
        sealSha256: done.seal,
      });
      changed = true;
    }
    await client.query('COMMIT');
  } catch (err) {
    await client.query('ROLLBACK').catch(() => {});
    throw err;
  } finally {
    client.release();
  }
  if (changed) hub.publishState(id, 'finished');
  return capturePublic((await Capture.findByPk(id))!);
}
