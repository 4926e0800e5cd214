import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { pino } from 'pino';
import { createApp } from '../../server/app.js';
import { AnalysisPool } from '../../server/analysis/pool.js';
import { createTestApp, TEST_JWT_SECRET, type TestApp } from '../helpers/app.js';
import { demoIds } from '../helpers/demo.js';
import { Capture, Dut } from '../../server/models/index.js';
import { loadSeries } from '../../server/services/readings.js';
import { prepare, reduce } from '../../server/services/captureAnalysis.js';
import { FINISH_IN_WORKER_MIN } from '../../server/services/finish.js';
import { checkSeal, sealOf } from '../../server/services/seal.js';
import { implausibleNote } from '../../shared/protocol/plausibility.js';

// Issue 15: a finish computes its summary (prepare + reduce, seconds at 10^7 readings) in an
// analysis worker, so the rest of the lab is served meanwhile; without a pool it computes on
// the event loop as before. Either way it stores what the one-piece computation gives.
let t: TestApp;
let analysis: AnalysisPool;
let app: ReturnType<typeof createApp>;
let token: string;
let ids: Awaited<ReturnType<typeof demoIds>>;
const auth = () => ({ authorization: `Bearer ${token}` });

beforeAll(async () => {
  t = await createTestApp();
  analysis = new AnalysisPool(t.db.url, 1, { openFreshMs: 0 });
  app = createApp({
    db: t.db,
    jwtSecret: TEST_JWT_SECRET,
    log: pino({ level: 'silent' }),
    analysis,
  });
  token = await t.tokenFor('lead');
  ids = await demoIds(app, token);
});
afterAll(async () => {
  await analysis.close();
  await t.close();
});

/** An open capture holding `n` drifting, noisy readings with one far outlier. */
async function captureWith(n: number): Promise<number> {
  const res = await request(app).post('/api/captures').set(auth()).send({
    dutId: ids.crystal.id,
    checkpointId: ids.checkpoints[0],
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
  });
  expect(res.status).toBe(201);
  const id = res.body.id as number;
  // Straight into the table (the ingest has tests of its own; here only the finish matters).
  await t.db.pool.query(
    `INSERT INTO readings (capture_id, seq, t, value, flags)
     SELECT $1, s, s, 16e6 + s * 1e-7 + sin(s * 0.7) * 2e-4 + CASE WHEN s = 1234 THEN 5 ELSE 0 END, 0
     FROM generate_series(0, $2 - 1) s`,
    [id, n],
  );
  await t.db.pool.query(
    'UPDATE captures SET reading_count = $2, highest_seq = $2 - 1 WHERE id = $1',
    [id, n],
  );
  return id;
}

/** The former one-piece computation on the rows as stored, for the capture as finished. */
async function oneByOne(id: number) {
  const series = await loadSeries(t.db.pool, id);
  const capture = (await Capture.findByPk(id))!;
  const dut = await Dut.findByPk(capture.dutId);
  capture.state = 'finished';
  const want = reduce(capture, dut, prepare(capture, series));
  const note = implausibleNote(series.flags);
  if (note) want.notes.push(note);
  return { summary: JSON.parse(JSON.stringify(want)), seal: sealOf(series) };
}

describe('finish in an analysis worker', () => {
  it('reduces 300,000 readings in the worker while the event loop answers other requests', async () => {
    const id = await captureWith(300_000);
    const want = await oneByOne(id);
    const before = { ...analysis.stats };
    const order: string[] = [];
    const finish = request(app)
      .post(`/api/captures/${id}/finish`)
      .set(auth())
      .then((res) => {
        order.push('finish');
        return res;
      });
    // Once the worker has the readings, a request sent now must not wait for the reduction.
    while (analysis.stats.finishesStarted === before.finishesStarted && order.length === 0)
      await new Promise((resolve) => setTimeout(resolve, 2));
    expect(order).toEqual([]);
    const health = request(app)
      .get('/api/health')
      .then((res) => {
        order.push('health');
        return res;
      });
    const [fin, h] = await Promise.all([finish, health]);
    expect(h.status).toBe(200);
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    expect(order).toEqual(['health', 'finish']);
    expect(analysis.stats.finishesStarted - before.finishesStarted).toBe(1);
    expect(analysis.stats.finishes - before.finishes).toBe(1);

    const row = await t.db.pool.query(
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
    expect((await checkSeal(t.db.pool, id)).verified).toBe(true);
  });

  it('computes a small capture, or any capture when the pool is closed, on the event loop, with the same result', async () => {
    const small = await captureWith(FINISH_IN_WORKER_MIN - 1);
    const wantSmall = await oneByOne(small);
    const before = { ...analysis.stats };
    const fin = await request(app).post(`/api/captures/${small}/finish`).set(auth());
    expect(fin.status).toBe(200);
    expect(analysis.stats.finishesStarted).toBe(before.finishesStarted);
    const smallRow = await t.db.pool.query(
      'SELECT summary, seal_sha256 FROM captures WHERE id = $1',
      [small],
    );
    expect(smallRow.rows[0].summary).toEqual(wantSmall.summary);
    expect(smallRow.rows[0].seal_sha256).toBe(wantSmall.seal);

    const closed = new AnalysisPool(t.db.url, 1);
    await closed.close();
    const app2 = createApp({
      db: t.db,
      jwtSecret: TEST_JWT_SECRET,
      log: pino({ level: 'silent' }),
      analysis: closed,
    });
    const id = await captureWith(FINISH_IN_WORKER_MIN + 5000);
    const want = await oneByOne(id);
    const fin2 = await request(app2).post(`/api/captures/${id}/finish`).set(auth());
    expect(fin2.status).toBe(200);
    expect(closed.stats.finishesStarted).toBe(0);
    const row = await t.db.pool.query('SELECT summary, seal_sha256 FROM captures WHERE id = $1', [
      id,
    ]);
    expect(row.rows[0].summary).toEqual(want.summary);
    expect(row.rows[0].seal_sha256).toBe(want.seal);
  });

  it('stores the explained empty summary when the analysis in the worker refuses the readings', async () => {
    const n = FINISH_IN_WORKER_MIN + 5000;
    const id = await captureWith(n);
    // A reading no analysis accepts (not finite), stored as an import or an older server might have.
    await t.db.pool.query('UPDATE readings SET value = $2 WHERE capture_id = $1 AND seq = 5', [
      id,
      'Infinity',
    ]);
    const before = { ...analysis.stats };
    const fin = await request(app).post(`/api/captures/${id}/finish`).set(auth());
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    expect(analysis.stats.finishes - before.finishes).toBe(1);
    const row = await t.db.pool.query(
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
    expect(row.rows[0].seal_sha256).toBe(sealOf(await loadSeries(t.db.pool, id)));
  });
});
