import type { AuthUser } from './auth.js';
import type pg from 'pg';
import { Capture, Dut } from '../models/index.js';
import { AppError, ForbiddenError, NotFoundError } from '../errors.js';
import { isRecording } from '../../shared/protocol/captureLifecycle.js';
import type { LiveHub } from './liveHub.js';
import { canWriteCapture } from './ingest.js';
import { loadSeries } from './readings.js';
import { prepare, reduce } from './captureAnalysis.js';
import { capturePublic } from './captures.js';
import { assertStudyWritable } from './studyLock.js';
import { AnalysisError } from '../../shared/analysis/index.js';
import { implausibleNote } from '../../shared/protocol/plausibility.js';
import type { Series } from './readings.js';
import { sealOfSliced } from './seal.js';
import { auditWithClient } from './audit.js';

/** Lets the event loop serve what waits before the next heavy synchronous step. */
const turn = () => new Promise<void>((resolve) => setImmediate(resolve));

/**
 * The capture's reduction; when the analysis refuses the readings (AnalysisError), the reduction of
 * no readings with the counts and the reason as a note, so finishing always succeeds and the
 * readings stay for a later look.
 */
async function reduceOrExplain(capture: Capture, dut: Dut | null, series: Series) {
  try {
    const prepared = prepare(capture, series);
    // A turn of the event loop between the two heavy steps (about 1 s each at 10^6 readings), so
    // other requests are served between them.
    await turn();
    return reduce(capture, dut, prepared);
  } catch (err) {
    if (!(err instanceof AnalysisError)) throw err;
    const empty: Series = {
      seq: new Int32Array(0),
      t: new Float64Array(0),
      value: new Float64Array(0),
      flags: new Int16Array(0),
    };
    const summary = reduce(capture, dut, prepare(capture, empty));
    summary.counts = { ...summary.counts, total: series.seq.length };
    summary.notes.push(`Analysis not computed: ${err.message} The readings are kept.`);
    return summary;
  }
}

/**
 * Closes a capture: from then on it takes no readings. Computes and caches its summary
 * (statistics, correction, stability, uncertainty budget) once; the chart tiles are kept by ingest. Finishing a
 * finished capture returns it unchanged.
 */
export async function finishCapture(pool: pg.Pool, hub: LiveHub, user: AuthUser, id: number) {
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
      const series = await loadSeries(client, id);
      capture.state = 'finished';
      await turn();
      const summary = await reduceOrExplain(capture, dut, series);
      const implausible = implausibleNote(series.flags);
      if (implausible) summary.notes.push(implausible);
      // No tile rebuild: every statement that adds readings has already merged them into the
      // capture's tiles (the trigger of migrations 0110/0230/0300, or the ingest's own merge of a
      // COPY), and readings are never changed or deleted while the capture lives, so the tiles
      // are already exactly what a rebuild from the rows would give (tests/helpers/tiles.ts
      // checks that in the ingest tests). Rebuilding them was the largest part of a finish.
      await client.query(
        `UPDATE captures SET state = 'finished', ended_at = now(), updated_at = now(), summary = $2::jsonb,
           reading_count = $3, highest_seq = $4 WHERE id = $1`,
        [
          id,
          JSON.stringify(summary),
          series.seq.length,
          series.seq.length ? series.seq[series.seq.length - 1] : -1,
        ],
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
