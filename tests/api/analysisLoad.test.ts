import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { AnalysisPool } from '../../server/analysis/pool.js';
import { MAX_RAW_READINGS } from '../../server/routes/captures.js';
import { seeded } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';
import { ReadingFlag } from '../../shared/protocol/reading.js';
import { PlausibilityWindow } from '../../shared/protocol/plausibility.js';

// Issue 10, items 2 and 7: analyses run in worker threads, cached per reading count and
// coalesced; raw reads are paged; implausible readings are flagged at ingest, left out of the
// analysis, and a capture can always be finished.
// openFreshMs 0: every new reading makes the next answer a fresh computation.
const demo = useDemoApp({}, { analysis: { openFreshMs: 0 } });
const analysis = () => demo.t.analysis!;
const lead = () => demo.auth('lead');
const get = (path: string) => demo.call('lead', 'get', path);
const openCapture = () => demo.newCapture('lead');

async function send(id: number, from: number, n: number, value: (seq: number) => number) {
  const readings = Array.from({ length: n }, (_, i) => ({
    seq: from + i,
    t: from + i,
    value: value(from + i),
  }));
  const res = await demo.postReadings(id, readings, 'lead');
  expect(res.status).toBe(200);
  return res.body;
}

const noise = seeded(7);
const steady = () => 16_000_000 + 0.01 * noise.gauss();

describe('analysis off the event loop (item 2)', () => {
  it('coalesces concurrent requests for one capture into one computation, then serves the cache until readings arrive', async () => {
    const id = await openCapture();
    await send(id, 0, 5000, steady);
    const before = { ...analysis().stats };
    const answers = await Promise.all(
      Array.from({ length: 4 }, () => get(`/api/captures/${id}/analysis`)),
    );
    for (const a of answers) {
      expect(a.status).toBe(200);
      expect(a.body.counts.total).toBe(5000);
    }
    expect(analysis().stats.computed - before.computed).toBe(1);
    expect(analysis().stats.coalesced - before.coalesced).toBe(3);

    const again = await get(`/api/captures/${id}/analysis`);
    expect(again.body).toEqual(answers[0].body);
    expect(analysis().stats.cacheHits - before.cacheHits).toBe(1);

    await send(id, 5000, 1000, steady);
    const later = await get(`/api/captures/${id}/analysis`);
    expect(later.body.counts.total).toBe(6000);
    expect(analysis().stats.computed - before.computed).toBe(2);
  });

  it('answers a 404 and a 422 from the worker as the API always did', async () => {
    expect((await get('/api/captures/999999/analysis')).status).toBe(404);
  });

  it('pages raw reads: at most MAX_RAW_READINGS per answer, with nextFrom to continue', async () => {
    const id = await openCapture();
    const total = MAX_RAW_READINGS + 2500;
    for (let from = 0; from < total; from += 20_000)
      await send(id, from, Math.min(20_000, total - from), steady);
    const first = await get(`/api/captures/${id}/readings`);
    expect(first.status).toBe(200);
    expect(first.body.readings).toHaveLength(MAX_RAW_READINGS);
    expect(first.body.nextFrom).toBe(MAX_RAW_READINGS);
    const rest = await request(demo.t.app)
      .get(`/api/captures/${id}/readings`)
      .query({ from: first.body.nextFrom })
      .set(await lead());
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
    const stored = await demo.t.db.pool.query(
      'SELECT value, flags FROM readings WHERE capture_id = $1 AND seq = 1234',
      [id],
    );
    expect(stored.rows[0].value).toBe(1e308);
    expect(stored.rows[0].flags & ReadingFlag.implausible).toBe(ReadingFlag.implausible);

    const a = await get(`/api/captures/${id}/analysis`);
    expect(a.status).toBe(200);
    expect(a.body.counts.used).toBeLessThanOrEqual(1999);
    expect(a.body.stats.mean).toBeGreaterThan(16e6 - 1);
    expect(a.body.stats.mean).toBeLessThan(16e6 + 1);
    expect(a.body.notes.join(' ')).toMatch(/implausible at ingest/);

    const fin = await demo.call('lead', 'post', `/api/captures/${id}/finish`);
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    const after = await get(`/api/captures/${id}/analysis`);
    expect(after.status).toBe(200);
    expect(after.body.notes.join(' ')).toMatch(/1 reading\(s\) flagged implausible/);
  });

  it('finishes even when readings the analysis refuses reached the database another way', async () => {
    const id = await openCapture();
    // Straight into the table, as an import or an older server might have stored them.
    await demo.storeStraight(id, 100, 'CASE WHEN s = 5 THEN 1e308 ELSE 16e6 + s * 1e-3 END');
    const fin = await demo.call('lead', 'post', `/api/captures/${id}/finish`);
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    const a = await get(`/api/captures/${id}/analysis`);
    expect(a.status).toBe(200);
    expect(a.body.counts.total).toBe(100);
  });
});

describe('an open capture polled while it grows (item 2)', () => {
  it('serves a recent answer for a few seconds and says which reading count it covers', async () => {
    // A pool that keeps an open capture's answer for a minute, as a busy server would for seconds.
    const slow = new AnalysisPool(demo.t.db.url, 1, { openFreshMs: 60_000 });
    const slowApp = demo.t.appWith({ analysis: slow });
    try {
      const id = await openCapture();
      await send(id, 0, 3000, steady);
      const first = await request(slowApp)
        .get(`/api/captures/${id}/analysis`)
        .set(await lead());
      expect(first.status).toBe(200);
      expect(first.body.coverage.readings).toBe(3000);
      expect(first.body.coverage.captureReadings).toBe(3000);
      expect(Number.isNaN(Date.parse(first.body.coverage.computedAt))).toBe(false);

      await send(id, 3000, 500, steady);
      const stale = await request(slowApp)
        .get(`/api/captures/${id}/analysis`)
        .set(await lead());
      expect(stale.body.counts.total).toBe(3000);
      expect(stale.body.coverage).toEqual({ ...first.body.coverage, captureReadings: 3500 });
      expect(slow.stats.computed).toBe(1);

      // Once finished, the answer covers every reading (a finished capture is never served stale).
      await request(slowApp)
        .post(`/api/captures/${id}/finish`)
        .set(await lead());
      const done = await request(slowApp)
        .get(`/api/captures/${id}/analysis`)
        .set(await lead());
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
      expect((await get(`/api/captures/${id}/analysis`)).status).toBe(200);
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
