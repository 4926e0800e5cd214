import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp } from '../helpers/app.js';
import { as, capture, plannedStudy } from '../helpers/review.js';
import { loadSeries } from '../../server/services/readings.js';

// Issue 15, a 10 M-reading capture: loadSeries reads a capture in pages by seq, so a long one never
// sits in memory as row arrays. Small pages here cross many page boundaries (and a gap in seq).
let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => {
  await t.close();
});

describe('loadSeries in pages', () => {
  it('reads every reading once, in seq order, whatever the page size, from a pool or a client', async () => {
    const plan = await plannedStudy(t, 'Paged read study');
    const id = await capture(t, plan, { n: 50, open: true });
    // A gap (seq 50–59 missing), then 30 more with flags, so pages do not line up with seq.
    const h = await as(t, 'engineer');
    const more = Array.from({ length: 30 }, (_, i) => ({
      seq: 60 + i,
      t: 60 + i,
      value: 10_000_000 + i * 1e-3,
      flags: i % 3,
    }));
    const r = await request(t.app)
      .post(`/api/captures/${id}/readings`)
      .set(h)
      .send({ readings: more });
    expect(r.status).toBe(200);

    const whole = await loadSeries(t.db.pool, id);
    // Expected: seq 0–49 and 60–89 (what was posted above), 80 readings.
    const expected = [...Array.from({ length: 50 }, (_, i) => i), ...more.map((m) => m.seq)];
    expect(Array.from(whole.seq)).toEqual(expected);
    expect(whole.flags[50 + 4]).toBe(1); // seq 64 was posted with flags 4 % 3 = 1
    expect(whole.t[79]).toBe(89);
    for (const page of [1, 7, 50, 79, 80, 81]) {
      const s = await loadSeries(t.db.pool, id, 0, 2_147_483_647, page);
      expect(Array.from(s.seq)).toEqual(expected);
      expect(Array.from(s.value)).toEqual(Array.from(whole.value));
      expect(Array.from(s.flags)).toEqual(Array.from(whole.flags));
    }
    // A seq range, read on a client inside the caller's transaction.
    const client = await t.db.pool.connect();
    try {
      await client.query('BEGIN');
      const part = await loadSeries(client, id, 45, 65, 4);
      await client.query('COMMIT');
      expect(Array.from(part.seq)).toEqual([45, 46, 47, 48, 49, 60, 61, 62, 63, 64, 65]);
    } finally {
      client.release();
    }
    // Nothing in range: empty arrays.
    const none = await loadSeries(t.db.pool, id, 50, 59, 3);
    expect(none.seq.length).toBe(0);
  });
});
