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
import type { Series } from './readings.js';
import { sealOfSliced } from './seal.js';
import { auditWithClient } from './audit.js';

/** Lets the event loop serve what waits before the next heavy synchronous step. */
const turn = () => new Promise<void>((resolve) => setImmediate(resolve));

/**
 * Below this many readings a finish computes its summary on the event loop: about 20 ms at most
 * (1 s per 10^6 readings measured), less than handing the readings to a worker that may first
 * have to start.
 */
export const FINISH_IN_WORKER_MIN = 20_000;

/**
 * The summary finish stores (finishSummary: prepare + reduce, AnalysisError explained). In an
 * analysis worker when the app has a pool, so the event loop keeps serving the lab during the
 * seconds a 10^7-reading capture takes; the readings move to the worker and back. On this
 * thread for a small capture (FINISH_IN_WORKER_MIN), when there is no pool (the import and the
 * demo story call finish without one) or it is closed, with a turn of the event loop between
 * the two heavy steps; and if the worker fails, the readings it took are loaded again (the
 * capture is still locked) and computed here.
 */
async function summaryOf(
  client: pg.PoolClient,
  capture: Capture,
  dut: Dut | null,
  series: Series,
  analysis: AnalysisPool | undefined,
): Promise<{ json: string; series: Series }> {
  if (analysis?.available && series.seq.length >= FINISH_IN_WORKER_MIN) {
    try {
      return await analysis.finishSummary({
        capture: capture.get({ plain: true }),
        dut: dut ? dut.get({ plain: true }) : null,
        series,
      });
    } catch (err) {
      if (err instanceof AppError) throw err;
      series = await loadSeries(client, capture.id);
    }
  }
  await turn();
  const summary = await finishSummary(capture, dut, series, turn);
  return { json: JSON.stringify(summary), series };
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
    const lock = await client.query<{ state: string; operator_id: number | null }>(
      'SELECT state, operator_id FROM captures WHERE id = $1 FOR UPDATE',
      [id],
    );
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
      const { json, series } = await summaryOf(
        client,
        capture,
        dut,
        await loadSeries(client, id),
        analysis,
      );
      // No tile rebuild: every statement that adds readings has already merged them into the
      // capture's tiles (the trigger of migrations 0110/0230/0300, or the ingest's own merge of a
      // COPY), and readings are never changed or deleted while the capture lives, so the tiles
      // are already exactly what a rebuild from the rows would give (tests/helpers/tiles.ts
      // checks that in the ingest tests). Rebuilding them was the largest part of a finish.
      await client.query(
        `UPDATE captures SET state = 'finished', ended_at = now(), updated_at = now(), summary = $2::jsonb,
           reading_count = $3, highest_seq = $4 WHERE id = $1`,
        [id, json, series.seq.length, series.seq.length ? series.seq[series.seq.length - 1] : -1],
      );
      // The seal: SHA-256 of the raw readings in the canonical serialisation (seal.ts).
      const seal = await sealOfSliced(series);
      await client.query('UPDATE captures SET seal_sha256 = $2, sealed_at = now() WHERE id = $1', [
        id,
        seal,
      ]);
      await auditWithClient(client, user.id, 'capture.finish', 'capture', id, {
        state: { from, to: 'finished' },
        readings: series.seq.length,
        sealSha256: seal,
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
