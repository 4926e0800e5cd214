import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { pino } from 'pino';
import { createApp } from '../../server/app.js';
import { AnalysisPool } from '../../server/analysis/pool.js';
import { TEST_JWT_SECRET } from '../helpers/app.js';
import { useDemoApp } from '../helpers/demoApp.js';
import { driftingCapture, onePieceFinish } from '../helpers/finishReference.js';
import { loadSeries } from '../../server/services/readings.js';
import { FINISH_IN_WORKER_MIN } from '../../server/services/finish.js';
import { checkSeal, sealOf } from '../../server/services/seal.js';

// Issue 15: a large capture's finish or abort is read, summarised and sealed wholly in the
// analysis pool's finish worker (server/services/finish.ts readAndSeal), which reads the rows in
// the finishing transaction's exported snapshot. What it stores must be what reading and
// computing on the event loop gives; a worker that fails leaves the work to the event loop.
const demo = useDemoApp({}, { analysis: { openFreshMs: 0 } });
const pool = () => demo.t.db.pool;
const analysis = () => demo.t.analysis!;

/** An open capture of `n` drifting, noisy readings with one far outlier (seq 77). */
const captureWith = (n: number) => driftingCapture(demo, n, 77, 3);

async function stored(id: number) {
  const row = await pool().query(
    'SELECT state, summary, seal_sha256, reading_count, highest_seq FROM captures WHERE id = $1',
    [id],
  );
  return row.rows[0];
}

const until = async (check: () => boolean) => {
  for (let i = 0; i < 5000 && !check(); i++) await new Promise((r) => setTimeout(r, 2));
  expect(check()).toBe(true);
};

describe('finish and abort read in the finish worker', () => {
  it('aborts a large capture with the seal, count and highest seq of its rows, computed in the worker', async () => {
    const n = FINISH_IN_WORKER_MIN + 3000;
    const id = await captureWith(n);
    const want = sealOf(await loadSeries(pool(), id));
    const before = { ...analysis().stats };
    const res = await demo.call('lead', 'post', `/api/captures/${id}/abort`, {
      reason: 'Fixture came loose half way',
    });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body.state).toBe('aborted');
    expect(analysis().stats.finishesStarted - before.finishesStarted).toBe(1);
    expect(analysis().stats.finishes - before.finishes).toBe(1);
    const row = await stored(id);
    expect(row).toMatchObject({ state: 'aborted', reading_count: n, highest_seq: n - 1 });
    // An aborted capture has no summary; its seal is the rows' (and PostgreSQL agrees).
    expect(row.summary).toBeNull();
    expect(row.seal_sha256).toBe(want);
    expect((await checkSeal(pool(), id)).verified).toBe(true);
  });

  it('reads the rows as the finishing transaction saw them, not as they are when the worker gets to them', async () => {
    const a = await captureWith(300_000);
    const b = await captureWith(FINISH_IN_WORKER_MIN + 10_000);
    const wantA = await onePieceFinish(pool(), a);
    const wantB = await onePieceFinish(pool(), b);
    const before = { ...analysis().stats };
    // A occupies the finish worker; B's job, its snapshot already taken, waits behind it.
    const finishA = demo.call('lead', 'post', `/api/captures/${a}/finish`);
    await until(() => analysis().stats.finishesStarted === before.finishesStarted + 1);
    const finishB = demo.call('lead', 'post', `/api/captures/${b}/finish`);
    await until(() => analysis().stats.finishesStarted === before.finishesStarted + 2);
    // Rows of B removed after B's snapshot, before the worker reads B (A is still running).
    const removed = await pool().query('DELETE FROM readings WHERE capture_id = $1 AND seq >= $2', [
      b,
      FINISH_IN_WORKER_MIN,
    ]);
    expect(removed.rowCount).toBe(10_000);
    expect(analysis().stats.finishes).toBe(before.finishes);
    const [resA, resB] = await Promise.all([finishA, finishB]);
    expect(resA.status).toBe(200);
    expect(resB.status).toBe(200);
    expect(analysis().stats.finishes - before.finishes).toBe(2);
    const rowA = await stored(a);
    expect(rowA.summary).toEqual(wantA.summary);
    expect(rowA.seal_sha256).toBe(wantA.seal);
    const rowB = await stored(b);
    // Everything B's finish saw when it locked the capture, none of the later change.
    expect(rowB.reading_count).toBe(FINISH_IN_WORKER_MIN + 10_000);
    expect(rowB.highest_seq).toBe(FINISH_IN_WORKER_MIN + 10_000 - 1);
    expect(rowB.summary).toEqual(wantB.summary);
    expect(rowB.seal_sha256).toBe(wantB.seal);
    // The rows as they are now no longer match the seal: the removal shows.
    expect((await checkSeal(pool(), b)).verified).toBe(false);
  });

  it('finishes on the event loop with the same result when the worker cannot read', async () => {
    // A pool whose finish worker reads from a database that does not exist.
    const broken = new AnalysisPool(demo.t.db.url, 1, {
      primaryUrl: demo.t.db.url.replace(/\/[^/?]+(\?|$)/, '/driftbench_no_such_db$1'),
    });
    try {
      const app = createApp({
        db: demo.t.db,
        jwtSecret: TEST_JWT_SECRET,
        log: pino({ level: 'silent' }),
        analysis: broken,
      });
      const id = await captureWith(FINISH_IN_WORKER_MIN + 5000);
      const want = await onePieceFinish(pool(), id);
      const res = await request(app)
        .post(`/api/captures/${id}/finish`)
        .set(await demo.auth('lead'));
      expect(res.status, JSON.stringify(res.body)).toBe(200);
      // Handed to the worker, which failed: nothing answered from there.
      expect(broken.stats.finishesStarted).toBe(1);
      expect(broken.stats.finishes).toBe(0);
      const row = await stored(id);
      expect(row.state).toBe('finished');
      expect(row.reading_count).toBe(FINISH_IN_WORKER_MIN + 5000);
      expect(row.summary).toEqual(want.summary);
      expect(row.seal_sha256).toBe(want.seal);
    } finally {
      await broken.close();
    }
  });
});
