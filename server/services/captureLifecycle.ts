import type pg from 'pg';
import type { Logger } from 'pino';
import { QueryTypes } from 'sequelize';
import { Capture } from '../models/index.js';
import { AppError, ForbiddenError, NotFoundError } from '../errors.js';
import type { LiveHub } from './liveHub.js';
import type { AuthUser } from './auth.js';
import { canWriteCapture } from './ingest.js';
import { readAndSeal } from './finish.js';
import type { AnalysisPool } from '../analysis/pool.js';
import { audit, auditWithClient } from './audit.js';
import { enqueueMail } from './mail.js';
import { capturePublic } from './captures.js';
import { assertStudyWritable } from './studyLock.js';
import {
  isRecording,
  STALL_GATES,
  STALL_MIN_MS,
  type StallSweepResult,
} from '../../shared/protocol/captureLifecycle.js';

/**
 * Abandons an open (or stalled) capture: it takes no more readings, keeps every reading it has
 * (tiled for the chart and sealed like a finished one, so they stay evidence of what happened),
 * and is marked `aborted` with the reason and who gave it, audited in the same transaction.
 * An aborted capture has no summary and never enters a verdict, the matrix or a comparison.
 * Only its operator, a lead or an admin may abort it; a finished or aborted capture answers 409.
 * `analysis`: the pool whose finish worker reads and seals a large capture (finish.ts readAndSeal).
 */
export async function abortCapture(
  pool: pg.Pool,
  hub: LiveHub,
  user: AuthUser,
  id: number,
  reason: string,
  analysis?: AnalysisPool,
) {
  await assertStudyWritable('capture', id, 'aborting a capture');
  const client = await pool.connect();
  try {
    await client.query('BEGIN');
    const lock = await client.query<{
      state: string;
      operator_id: number | null;
      reading_count: number;
    }>('SELECT state, operator_id, reading_count FROM captures WHERE id = $1 FOR UPDATE', [id]);
    if (lock.rowCount === 0) throw new NotFoundError('Capture');
    const { state, operator_id: operatorId } = lock.rows[0];
    if (!canWriteCapture(user, operatorId))
      throw new ForbiddenError("Only the capture's operator, a lead or an admin may abort it.");
    if (!isRecording(state)) {
      throw new AppError(
        409,
        state === 'aborted' ? 'capture-aborted' : 'capture-finished',
        `This capture is ${state}: only an open capture can be aborted.`,
        { state },
      );
    }
    // Read and sealed in the finish worker for a large capture, as finish does (no summary).
    const sealed = await readAndSeal(client, id, lock.rows[0].reading_count, analysis);
    // The tiles are kept by ingest as the readings go in (see finish.ts): nothing to rebuild.
    await client.query(
      `UPDATE captures SET state = 'aborted', ended_at = now(), updated_at = now(), abort_reason = $2, aborted_by = $3,
         reading_count = $4, highest_seq = $5, seal_sha256 = $6, sealed_at = now() WHERE id = $1`,
      [id, reason, user.id, sealed.readingCount, sealed.highestSeq, sealed.seal],
    );
    await auditWithClient(client, user.id, 'capture.abort', 'capture', id, {
      state: { from: state, to: 'aborted' },
      reason,
      readings: sealed.readingCount,
    });
    await client.query('COMMIT');
  } catch (err) {
    await client.query('ROLLBACK').catch(() => {});
    throw err;
  } finally {
    client.release();
  }
  hub.publishState(id, 'aborted');
  return capturePublic((await Capture.findByPk(id))!);
}

interface StalledRow {
  id: number;
  gateTime: number;
  lastAt: Date;
  stalledAt: Date;
  readingCount: number;
  email: string | null;
  active: boolean | null;
  label: string;
  title: string;
}

/**
 * The stall sweep: every open capture that has had no readings (or none since it opened) for
 * longer than max(gate time × 100, 10 minutes) at `now` becomes `stalled`, with an audit event
 * and an e-mail to its operator (the local outbox; once per stall). A stalled capture stays open
 * for readings: the next accepted batch returns it to `open` (server/services/ingest.ts).
 * The server runs this every minute (startStallSweep); tests call it with their own clock.
 */
export async function sweepStalledCaptures(
  now = new Date(),
  hub?: Pick<LiveHub, 'publishState'>,
): Promise<StallSweepResult> {
  const sequelize = Capture.sequelize!;
  const result = await sequelize.transaction(async (transaction) => {
    const rows = (await sequelize.query(
      `WITH due AS (
         SELECT c.id FROM captures c
         WHERE c.state = 'open'
           AND COALESCE(c.last_reading_at, c.started_at) + make_interval(secs => GREATEST(c.gate_time * $2, $3)) < $1
         FOR UPDATE SKIP LOCKED),
       upd AS (
         UPDATE captures c SET state = 'stalled', stalled_at = $1, updated_at = $1 FROM due WHERE c.id = due.id
         RETURNING c.id, c.dut_id, c.operator_id, c.gate_time, COALESCE(c.last_reading_at, c.started_at) AS last_at,
           c.stalled_at, c.reading_count)
       SELECT upd.id, upd.gate_time AS "gateTime", upd.last_at AS "lastAt", upd.stalled_at AS "stalledAt",
         upd.reading_count AS "readingCount", u.email, u.active, d.label, s.title
       FROM upd JOIN duts d ON d.id = upd.dut_id JOIN studies s ON s.id = d.study_id
       LEFT JOIN users u ON u.id = upd.operator_id
       ORDER BY upd.id`,
      { bind: [now, STALL_GATES, STALL_MIN_MS / 1000], transaction, type: QueryTypes.SELECT },
    )) as StalledRow[];
    let notified = 0;
    for (const r of rows) {
      const quietMin = Math.round((now.getTime() - new Date(r.lastAt).getTime()) / 60_000);
      await audit(
        null,
        'capture.stall',
        'capture',
        r.id,
        {
          state: { from: 'open', to: 'stalled' },
          quietMinutes: quietMin,
          readings: r.readingCount,
        },
        transaction,
      );
      if (!r.email || !r.active) continue;
      const sent = await enqueueMail(
        {
          kind: 'capture-stalled',
          to: r.email,
          subject: `Driftbench: capture #${r.id} of ${r.label} has stalled`,
          text:
            `Capture #${r.id} of ${r.label} in study “${r.title}” has received no readings for ${quietMin} minute(s) ` +
            `(it has ${r.readingCount} reading(s)); it is marked stalled.\n\n` +
            'If the bench is still running, readings arriving again return it to recording. Otherwise finish it, or ' +
            `abort it with a reason, on its capture page (/captures/${r.id}).\n`,
          dedupeKey: `capture-stalled:${r.id}:${new Date(r.stalledAt).toISOString()}`,
        },
        transaction,
      );
      if (sent) notified++;
    }
    return { stalled: rows.map((r) => r.id), notified };
  });
  // Watchers see the stall at once (after the commit), not on their next read.
  for (const id of result.stalled) hub?.publishState(id, 'stalled');
  return result;
}

/** Runs the stall sweep every `intervalMs` (default one minute: the shortest stall is ten). */
export function startStallSweep(
  opts: { intervalMs?: number; log?: Logger; hub?: Pick<LiveHub, 'publishState'> } = {},
): {
  stop(): void;
} {
  const timer = setInterval(() => {
    sweepStalledCaptures(new Date(), opts.hub).catch((err: unknown) =>
      opts.log?.error({ err }, 'stall sweep failed'),
    );
  }, opts.intervalMs ?? 60_000);
  timer.unref();
  return { stop: () => clearInterval(timer) };
}
