import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { AnalysisPool } from '../../server/analysis/pool.js';
import { useDemoApp } from '../helpers/demoApp.js';
import { driftingCapture, onePieceFinish } from '../helpers/finishReference.js';
import { loadSeries } from '../../server/services/readings.js';
import { FINISH_IN_WORKER_MIN } from '../../server/services/finish.js';
import { checkSeal, sealOf } from '../../server/services/seal.js';

// Issue 15: a finish computes its summary (prepare + reduce, seconds at 10^7 readings) in an
// analysis worker, so the rest of the lab is served meanwhile; without a pool it computes on
// the event loop as before. Either way it stores what the one-piece computation gives.
// An app whose analysis pool has one worker; openFreshMs 0, as in analysisLoad.test.ts.
const demo = useDemoApp({}, { analysis: { openFreshMs: 0 } });
const pool = () => demo.t.db.pool;
const analysis = () => demo.t.analysis!;
const finish = (id: number) => demo.call('lead', 'post', `/api/captures/${id}/finish`);

/** An open capture of `n` drifting, noisy readings with one far outlier (seq 1234). */
const captureWith = (n: number) => driftingCapture(demo, n, 1234, 5);

/** The former one-piece computation on the rows as stored, for the capture as finished. */
const oneByOne = (id: number) => onePieceFinish(pool(), id);

describe('finish in an analysis worker', () => {
  it('reduces 300,000 readings in the worker while the event loop answers other requests', async () => {
    const id = await captureWith(300_000);
    const want = await oneByOne(id);
    const before = { ...analysis().stats };
    const order: string[] = [];
    const finishing = finish(id).then((res) => {
      order.push('finish');
      return res;
    });
    // Once the worker has the readings, a request sent now must not wait for the reduction.
    while (analysis().stats.finishesStarted === before.finishesStarted && order.length === 0)
      await new Promise((resolve) => setTimeout(resolve, 2));
    expect(order).toEqual([]);
    const health = request(demo.t.app)
      .get('/api/health')
      .then((res) => {
        order.push('health');
        return res;
      });
    const [fin, h] = await Promise.all([finishing, health]);
    expect(h.status).toBe(200);
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    expect(order).toEqual(['health', 'finish']);
    expect(analysis().stats.finishesStarted - before.finishesStarted).toBe(1);
    expect(analysis().stats.finishes - before.finishes).toBe(1);

    const row = await pool().query(
      'SELECT summary, seal_sha256, reading_count FROM captures WHERE id = $1',
      [id],
    );
    expect(row.rows[0].reading_count).toBe(300_000);
    expect(row.rows[0].summary).toEqual(want.summary);
    // The far outlier (seq 1234) was found in the worker as on the event loop.
    expect(row.rows[0].summary.counts).toEqual({
      total: 300_000,
      used: 299_999,
      flagged: 0,
      outliers: 1,
    });
    expect(row.rows[0].seal_sha256).toBe(want.seal);
    expect((await checkSeal(pool(), id)).verified).toBe(true);
  });

  it('computes a small capture, or any capture when the pool is closed, on the event loop, with the same result', async () => {
    const small = await captureWith(FINISH_IN_WORKER_MIN - 1);
    const wantSmall = await oneByOne(small);
    const before = { ...analysis().stats };
    const fin = await finish(small);
    expect(fin.status).toBe(200);
    expect(analysis().stats.finishesStarted).toBe(before.finishesStarted);
    const smallRow = await pool().query('SELECT summary, seal_sha256 FROM captures WHERE id = $1', [
      small,
    ]);
    expect(smallRow.rows[0].summary).toEqual(wantSmall.summary);
    expect(smallRow.rows[0].seal_sha256).toBe(wantSmall.seal);

    const closed = new AnalysisPool(demo.t.db.url, 1);
    await closed.close();
    const app2 = demo.t.appWith({ analysis: closed });
    const id = await captureWith(FINISH_IN_WORKER_MIN + 5000);
    const want = await oneByOne(id);
    const fin2 = await request(app2)
      .post(`/api/captures/${id}/finish`)
      .set(await demo.auth('lead'));
    expect(fin2.status).toBe(200);
    expect(closed.stats.finishesStarted).toBe(0);
    const row = await pool().query('SELECT summary, seal_sha256 FROM captures WHERE id = $1', [id]);
    expect(row.rows[0].summary).toEqual(want.summary);
    expect(row.rows[0].seal_sha256).toBe(want.seal);
  });

  it('stores the explained empty summary when the analysis in the worker refuses the readings', async () => {
    const n = FINISH_IN_WORKER_MIN + 5000;
    const id = await captureWith(n);
    // A reading no analysis accepts (not finite), stored as an import or an older server might have.
    await pool().query('UPDATE readings SET value = $2 WHERE capture_id = $1 AND seq = 5', [
      id,
      'Infinity',
    ]);
    const before = { ...analysis().stats };
    const fin = await finish(id);
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    expect(analysis().stats.finishes - before.finishes).toBe(1);
    const row = await pool().query(
      'SELECT summary, seal_sha256, reading_count FROM captures WHERE id = $1',
      [id],
    );
    const summary = row.rows[0].summary;
    expect(row.rows[0].reading_count).toBe(n);
    expect(summary.counts).toEqual({ total: n, used: 0, flagged: 0, outliers: 0 });
    expect(summary.stats).toBeNull();
    expect(
      summary.notes.some(
        (x: string) =>
          x.startsWith('Analysis not computed: ') && x.endsWith('The readings are kept.'),
      ),
    ).toBe(true);
    expect(row.rows[0].seal_sha256).toBe(sealOf(await loadSeries(pool(), id)));
  });
});
