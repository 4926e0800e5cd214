import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { pino } from 'pino';
import { createApp } from '../../server/app.js';
import { AnalysisPool } from '../../server/analysis/pool.js';
import { MAX_RAW_READINGS } from '../../server/routes/captures.js';
import { createTestApp, TEST_JWT_SECRET, type TestApp } from '../helpers/app.js';
import { demoIds, seeded } from '../helpers/demo.js';
import { ReadingFlag } from '../../shared/protocol/reading.js';
import { PlausibilityWindow } from '../../shared/protocol/plausibility.js';

// Issue 10, items 2 and 7: analyses run in worker threads, cached per reading count and
// coalesced; raw reads are paged; implausible readings are flagged at ingest, left out of the
// analysis, and a capture can always be finished.
let t: TestApp;
let analysis: AnalysisPool;
let app: ReturnType<typeof createApp>;
let token: string;
let ids: Awaited<ReturnType<typeof demoIds>>;
const auth = () => ({ authorization: `Bearer ${token}` });

beforeAll(async () => {
  t = await createTestApp();
  // openFreshMs 0: every new reading makes the next answer a fresh computation.
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

async function openCapture(): Promise<number> {
  const res = await request(app).post('/api/captures').set(auth()).send({
    dutId: ids.crystal.id,
    checkpointId: ids.checkpoints[0],
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
  });
  expect(res.status).toBe(201);
  return res.body.id;
}

async function send(id: number, from: number, n: number, value: (seq: number) => number) {
  const readings = Array.from({ length: n }, (_, i) => ({
    seq: from + i,
    t: from + i,
    value: value(from + i),
  }));
  const res = await request(app)
    .post(`/api/captures/${id}/readings`)
    .set(auth())
    .send({ readings });
  expect(res.status).toBe(200);
  return res.body;
}

const noise = seeded(7);
const steady = () => 16_000_000 + 0.01 * noise.gauss();

describe('analysis off the event loop (item 2)', () => {
  it('coalesces concurrent requests for one capture into one computation, then serves the cache until readings arrive', async () => {
    const id = await openCapture();
    await send(id, 0, 5000, steady);
    const before = { ...analysis.stats };
    const answers = await Promise.all(
      Array.from({ length: 4 }, () => request(app).get(`/api/captures/${id}/analysis`).set(auth())),
    );
    for (const a of answers) {
      expect(a.status).toBe(200);
      expect(a.body.counts.total).toBe(5000);
    }
    expect(analysis.stats.computed - before.computed).toBe(1);
    expect(analysis.stats.coalesced - before.coalesced).toBe(3);

    const again = await request(app).get(`/api/captures/${id}/analysis`).set(auth());
    expect(again.body).toEqual(answers[0].body);
    expect(analysis.stats.cacheHits - before.cacheHits).toBe(1);

    await send(id, 5000, 1000, steady);
    const later = await request(app).get(`/api/captures/${id}/analysis`).set(auth());
    expect(later.body.counts.total).toBe(6000);
    expect(analysis.stats.computed - before.computed).toBe(2);
  });

  it('answers a 404 and a 422 from the worker as the API always did', async () => {
    expect((await request(app).get('/api/captures/999999/analysis').set(auth())).status).toBe(404);
  });

  it('pages raw reads: at most MAX_RAW_READINGS per answer, with nextFrom to continue', async () => {
    const id = await openCapture();
    const total = MAX_RAW_READINGS + 2500;
    for (let from = 0; from < total; from += 20_000)
      await send(id, from, Math.min(20_000, total - from), steady);
    const first = await request(app).get(`/api/captures/${id}/readings`).set(auth());
    expect(first.status).toBe(200);
    expect(first.body.readings).toHaveLength(MAX_RAW_READINGS);
    expect(first.body.nextFrom).toBe(MAX_RAW_READINGS);
    const rest = await request(app)
      .get(`/api/captures/${id}/readings`)
      .query({ from: first.body.nextFrom })
      .set(auth());
    expect(rest.body.readings).toHaveLength(2500);
    expect(rest.body.nextFrom).toBeNull();
    expect(rest.body.readings[0].seq).toBe(MAX_RAW_READINGS);
  });
});

describe('implausible readings (item 7)', () => {
  it('judges by the documented rule (hand-made cases, common practice, no source)', () => {
    const w = new PlausibilityWindow(16e6);
    expect(w.check(1e308)).toBe(false); // magnitude
    expect(w.check(40e6)).toBe(false); // more than 100 % from the nominal
    for (let i = 0; i < 32; i++) expect(w.check(16e6 + (i % 5) * 0.01)).toBe(true);
    expect(w.check(16e6 + 50_000)).toBe(false); // 50 kHz away: > 10⁴·MAD (0.01 Hz) and > 0.1 % of 16 MHz
    expect(w.check(16e6 + 5)).toBe(true); // a 0.3 ppm step is ordinary
    const accel = new PlausibilityWindow(null);
    for (let i = 0; i < 32; i++) expect(accel.check((i % 7) - 3)).toBe(true); // mg around 0
    expect(accel.check(2)).toBe(true);
    expect(accel.check(-80_000)).toBe(false);
  });

  it('flags 1e308 at ingest, keeps it, leaves it out of the analysis, names the rule, and finishes', async () => {
    const id = await openCapture();
    await send(id, 0, 2000, (seq) => (seq === 1234 ? 1e308 : steady()));
    const stored = await t.db.pool.query(
      'SELECT value, flags FROM readings WHERE capture_id = $1 AND seq = 1234',
      [id],
    );
    expect(stored.rows[0].value).toBe(1e308);
    expect(stored.rows[0].flags & ReadingFlag.implausible).toBe(ReadingFlag.implausible);

    const a = await request(app).get(`/api/captures/${id}/analysis`).set(auth());
    expect(a.status).toBe(200);
    expect(a.body.counts.used).toBeLessThanOrEqual(1999);
    expect(a.body.stats.mean).toBeGreaterThan(16e6 - 1);
    expect(a.body.stats.mean).toBeLessThan(16e6 + 1);
    expect(a.body.notes.join(' ')).toMatch(/implausible at ingest/);

    const fin = await request(app).post(`/api/captures/${id}/finish`).set(auth());
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    const after = await request(app).get(`/api/captures/${id}/analysis`).set(auth());
    expect(after.status).toBe(200);
    expect(after.body.notes.join(' ')).toMatch(/1 reading\(s\) flagged implausible/);
  });

  it('finishes even when readings the analysis refuses reached the database another way', async () => {
    const id = await openCapture();
    // Straight into the table, as an import or an older server might have stored them.
    await t.db.pool.query(
      `INSERT INTO readings (capture_id, seq, t, value, flags) SELECT $1, s, s, CASE WHEN s = 5 THEN 1e308 ELSE 16e6 + s * 1e-3 END, 0 FROM generate_series(0, 99) s`,
      [id],
    );
    await t.db.pool.query(
      'UPDATE captures SET reading_count = 100, highest_seq = 99 WHERE id = $1',
      [id],
    );
    const fin = await request(app).post(`/api/captures/${id}/finish`).set(auth());
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    const a = await request(app).get(`/api/captures/${id}/analysis`).set(auth());
    expect(a.status).toBe(200);
    expect(a.body.counts.total).toBe(100);
  });
});

describe('an open capture polled while it grows (item 2)', () => {
  it('serves a recent answer for a few seconds and says which reading count it covers', async () => {
    // A pool that keeps an open capture's answer for a minute, as a busy server would for seconds.
    const slow = new AnalysisPool(t.db.url, 1, { openFreshMs: 60_000 });
    const slowApp = createApp({
      db: t.db,
      jwtSecret: TEST_JWT_SECRET,
      log: pino({ level: 'silent' }),
      analysis: slow,
    });
    try {
      const id = await openCapture();
      await send(id, 0, 3000, steady);
      const first = await request(slowApp).get(`/api/captures/${id}/analysis`).set(auth());
      expect(first.status).toBe(200);
      expect(first.body.coverage.readings).toBe(3000);
      expect(first.body.coverage.captureReadings).toBe(3000);
      expect(Number.isNaN(Date.parse(first.body.coverage.computedAt))).toBe(false);

      await send(id, 3000, 500, steady);
      const stale = await request(slowApp).get(`/api/captures/${id}/analysis`).set(auth());
      expect(stale.body.counts.total).toBe(3000);
      expect(stale.body.coverage).toEqual({ ...first.body.coverage, captureReadings: 3500 });
      expect(slow.stats.computed).toBe(1);

      // Once finished, the answer covers every reading (a finished capture is never served stale).
      await request(slowApp).post(`/api/captures/${id}/finish`).set(auth());
      const done = await request(slowApp).get(`/api/captures/${id}/analysis`).set(auth());
      expect(done.body.coverage.readings).toBe(3500);
      expect(done.body.coverage.captureReadings).toBe(3500);
    } finally {
      await slow.close();
    }
  });

  it.skipIf(process.platform !== 'linux')(
    'computes in a thread that runs at a lower CPU priority than the event loop',
    async () => {
      const id = await openCapture();
      await send(id, 0, 100, steady);
      expect((await request(app).get(`/api/captures/${id}/analysis`).set(auth())).status).toBe(200);
      const { readdirSync, readFileSync } = await import('node:fs');
      // Field 19 of /proc/<pid>/task/<tid>/stat is the thread's nice value (proc(5)).
      const nice = readdirSync('/proc/self/task').map((tid) =>
        Number(readFileSync(`/proc/self/task/${tid}/stat`, 'utf8').split(') ')[1].split(' ')[16]),
      );
      expect(nice).toContain(10);
      expect(nice).toContain(0);
    },
  );
});
