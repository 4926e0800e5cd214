import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { capture, plannedStudy } from '../helpers/review.js';
import { loadSeries } from '../../server/services/readings.js';

// Issue 15, a 10 M-reading capture: loadSeries reads a capture by a binary COPY parsed as it
// streams (no row objects, no text parsing). 6,000 readings are ~230 kB of COPY data, so tuples
// cross the stream's chunk boundaries; a gap in seq and flags check that nothing shifts.
const demo = useDemoApp();

describe('loadSeries by binary COPY', () => {
  it('reads every reading once, in seq order, with its t, value and flags, from a pool or a client', async () => {
    const plan = await plannedStudy(demo.t, 'Binary read study');
    const id = await capture(demo.t, plan, { n: 1, open: true });
    const h = await demo.auth('engineer');
    // The expected values come from what was posted: seq 0 by the helper (t 0, 10 MHz), then
    // 1–3,000, a gap of 3,001–3,100, then 3,101–6,100; flags i % 3 on every seventh reading.
    const posted = Array.from({ length: 6_000 }, (_, i) => {
      const seq = i < 3_000 ? i + 1 : i + 101;
      return {
        seq,
        t: seq * 0.25,
        value: 16e6 + Math.sin(seq) * 1e-3,
        ...(i % 7 === 0 ? { flags: i % 3 } : {}),
      };
    });
    for (let b = 0; b < posted.length; b += 2_000) {
      const r = await request(demo.t.app)
        .post(`/api/captures/${id}/readings`)
        .set(h)
        .send({ readings: posted.slice(b, b + 2_000) });
      expect(r.status).toBe(200);
    }

    const all = [{ seq: 0, t: 0, value: 10_000_000, flags: 0 }, ...posted];
    const whole = await loadSeries(demo.t.db.pool, id);
    expect(Array.from(whole.seq)).toEqual(all.map((p) => p.seq));
    expect(Array.from(whole.t)).toEqual(all.map((p) => p.t));
    expect(Array.from(whole.value)).toEqual(all.map((p) => p.value));
    expect(Array.from(whole.flags)).toEqual(all.map((p) => p.flags ?? 0));

    // A seq range across the gap, read on a client inside the caller's transaction.
    const client = await demo.t.db.pool.connect();
    try {
      await client.query('BEGIN');
      const part = await loadSeries(client, id, 2_996, 3_105);
      await client.query('COMMIT');
      expect(Array.from(part.seq)).toEqual([
        2_996, 2_997, 2_998, 2_999, 3_000, 3_101, 3_102, 3_103, 3_104, 3_105,
      ]);
      expect(part.value[5]).toBe(16e6 + Math.sin(3_101) * 1e-3);
    } finally {
      client.release();
    }
    // Nothing in range, and a capture with no readings: empty arrays.
    expect((await loadSeries(demo.t.db.pool, id, 3_001, 3_100)).seq.length).toBe(0);
    expect((await loadSeries(demo.t.db.pool, id + 1_000_000)).seq.length).toBe(0);
  });
});
