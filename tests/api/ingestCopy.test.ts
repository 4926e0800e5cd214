import { describe, expect, it } from 'vitest';
import { useDemoApp } from '../helpers/demoApp.js';
import { batch, storedCounters, storedRows } from '../helpers/ingest.js';
import { expectTilesAsRebuilt, keptTiles } from '../helpers/tiles.js';
import { encodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';
import { COPY_MIN_BATCH } from '../../server/services/ingest.js';
import { tilesOfBatch } from '../../server/services/liveTiles.js';
import type { ReadingIn } from '../../shared/protocol/captures.js';

// Issue 15, one stream: a long batch above everything stored goes into `readings` by binary COPY
// (server/services/ingest.ts, ingestByCopy) with its tiles merged by the ingest itself (the
// trigger steps aside, migration 20261202-0230). Exactly the rows, never a duplicate, tiles as
// buildTiles makes them at finish.
const demo = useDemoApp();
const { newCapture, postBinary } = demo;
const postJson = (id: number, readings: ReadingIn[]) => demo.postReadings(id, readings);
const stored = (id: number) => storedRows(demo.t.db.pool, id);
const capture = (id: number) => storedCounters(demo.t.db.pool, id);
const tiles = (id: number) => keptTiles(demo.t.db.pool, id);

describe('the COPY path of POST /api/captures/:id/readings', () => {
  it('applies to batches of at least COPY_MIN_BATCH readings', () => {
    // The threshold the tests below cross (a design choice, no source).
    expect(COPY_MIN_BATCH).toBe(256);
  });

  it('stores exactly the rows of a long batch, bit for bit, and moves the counters', async () => {
    const id = await newCapture();
    const sent = batch(0, 5000);
    sent[17].flags = 4; // a link's flag travels through COPY as it is
    const res = await postBinary(id, sent);
    expect(res.status).toBe(200);
    expect(res.body).toEqual({ accepted: 5000, duplicates: 0, highestSeq: 4999 });
    const rows = await stored(id);
    expect(rows).toHaveLength(5000);
    rows.forEach((r, i) => {
      expect(r.seq).toBe(sent[i].seq);
      expect(Object.is(r.t, sent[i].t)).toBe(true);
      expect(Object.is(r.value, sent[i].value)).toBe(true);
    });
    expect(rows[17].flags).toBe(4);
    expect(await capture(id)).toEqual({ reading_count: 5000, highest_seq: 4999 });
  });

  it('duplicates nothing when the same batch is sent again, as JSON or binary', async () => {
    const id = await newCapture();
    const sent = batch(0, 3000);
    expect((await postJson(id, sent)).body).toEqual({
      accepted: 3000,
      duplicates: 0,
      highestSeq: 2999,
    });
    for (const resend of [postJson, postBinary]) {
      const again = await resend(id, sent);
      expect(again.status).toBe(200);
      expect(again.body).toEqual({ accepted: 0, duplicates: 3000, highestSeq: 2999 });
    }
    expect((await stored(id)).length).toBe(3000);
    expect(await capture(id)).toEqual({ reading_count: 3000, highest_seq: 2999 });
  });

  it('stores only the new readings of a batch that overlaps stored ones', async () => {
    const id = await newCapture();
    expect((await postBinary(id, batch(0, 5000))).body.accepted).toBe(5000);
    const res = await postBinary(id, batch(4000, 9000));
    expect(res.body).toEqual({ accepted: 4000, duplicates: 1000, highestSeq: 8999 });
    const rows = await stored(id);
    expect(rows).toHaveLength(9000);
    expect(new Set(rows.map((r) => r.seq)).size).toBe(9000);
    expect(await capture(id)).toEqual({ reading_count: 9000, highest_seq: 8999 });
  });

  it('takes a batch below a gap by the conflict-safe way and keeps every reading once', async () => {
    const id = await newCapture();
    // Readings 5000… arrive before 0… (a reordered resend after a reload): the second batch lies
    // below the highest stored seq, so it cannot go by COPY.
    expect((await postBinary(id, batch(5000, 10_000))).body.accepted).toBe(5000);
    const res = await postBinary(id, batch(0, 5000));
    expect(res.body).toEqual({ accepted: 5000, duplicates: 0, highestSeq: 9999 });
    expect((await stored(id)).map((r) => r.seq)).toEqual(
      Array.from({ length: 10_000 }, (_, i) => i),
    );
  });

  it('leaves tiles equal to the ones buildTiles makes from the rows, and finish keeps them', async () => {
    const id = await newCapture();
    // Batches of 5,000 do not end on 64-seq runs, so most tiles are merged across batches; a
    // resend and an overlap go through the trigger, the rest through the ingest's own merge.
    await postBinary(id, batch(0, 5000));
    await postJson(id, batch(5000, 5100)); // short: the one-statement path and the trigger
    await postBinary(id, batch(5100, 12_345));
    await postBinary(id, batch(12_000, 20_000)); // overlap: conflict-safe path
    await postBinary(id, batch(20_000, 20_300));
    expect((await tiles(id)).length).toBeGreaterThan(21);
    // Finish keeps them, and they equal a rebuild from the rows at every level it makes.
    await expectTilesAsRebuilt(demo, id);
  });

  it('computes a batch’s tiles with ties going to the smallest seq', () => {
    // Worked by hand (common practice, no source): seqs 60…69 straddle the 64-seq runs 0 and 1.
    const seq = [60, 61, 62, 63, 64, 65, 66, 67, 68, 69];
    const value = [5, 1, 1, 9, 3, 9, 9, 2, 2, 0];
    const tl = tilesOfBatch(
      seq,
      seq.map((s) => s / 10),
      value,
    );
    // Level 0: run 0 (seqs 60–63) min 1 at 61, max 9 at 63; run 1 (64–69) min 0 at 69, max 9 at 65.
    expect(tl.level.slice(0, 2)).toEqual([0, 0]);
    expect(tl.bucket.slice(0, 2)).toEqual([0, 1]);
    expect(tl.minSeq.slice(0, 2)).toEqual([61, 69]);
    expect(tl.maxSeq.slice(0, 2)).toEqual([63, 65]);
    // Level 1 and every level above: one bucket 0, min 0 at 69, max 9 at 63 (the earlier of the ties).
    expect(tl.level.length).toBe(2 + 20);
    for (let k = 2; k < tl.level.length; k++) {
      expect(tl.bucket[k]).toBe(0);
      expect(tl.minSeq[k]).toBe(69);
      expect(tl.minValue[k]).toBe(0);
      expect(tl.maxSeq[k]).toBe(63);
      expect(tl.maxT[k]).toBe(6.3);
    }
  });

  it('refuses a long batch of a locked study and stores nothing', async () => {
    const id = await newCapture();
    const study = await demo.t.db.pool.query<{ id: number; status: string }>(
      'SELECT s.id, s.status FROM captures c JOIN duts d ON d.id = c.dut_id JOIN studies s ON s.id = d.study_id WHERE c.id = $1',
      [id],
    );
    const { id: studyId, status } = study.rows[0];
    // As in tests/api/studyLock.test.ts: the status set directly in the database, then put back.
    await demo.t.db.pool.query(`UPDATE studies SET status = 'in-review' WHERE id = $1`, [studyId]);
    try {
      const res = await postBinary(id, batch(0, 1000));
      expect(res.status).toBe(409);
      expect(res.body.error.code).toBe('study-locked');
      const short = await postJson(id, batch(0, 10));
      expect(short.status).toBe(409);
      expect(short.body.error.code).toBe('study-locked');
    } finally {
      await demo.t.db.pool.query('UPDATE studies SET status = $2 WHERE id = $1', [studyId, status]);
    }
    expect(await stored(id)).toHaveLength(0);
    expect(await capture(id)).toEqual({ reading_count: 0, highest_seq: -1 });
  });

  it('refuses readings of a capture that does not exist, as the foreign key did', async () => {
    // Migration 20261202-0230 checks the key once per statement instead of once per row. A
    // capture made and deleted: its id lies in a block whose partition exists.
    const gone = await newCapture();
    await demo.t.db.pool.query('DELETE FROM captures WHERE id = $1', [gone]);
    await expect(
      demo.t.db.pool.query(
        'INSERT INTO readings (capture_id, seq, t, value) SELECT $1, g, g, 1 FROM generate_series(0, 9) g',
        [gone],
      ),
    ).rejects.toMatchObject({ code: '23503' });
    const none = await demo.t.db.pool.query('SELECT 1 FROM readings WHERE capture_id = $1', [gone]);
    expect(none.rowCount).toBe(0);
  });

  it('deletes a capture’s readings with the capture, as ON DELETE CASCADE did', async () => {
    const id = await newCapture();
    const keep = await newCapture();
    await postBinary(id, batch(0, 2000));
    await postBinary(keep, batch(0, 500));
    await demo.t.db.pool.query('DELETE FROM captures WHERE id = $1', [id]);
    expect(await stored(id)).toHaveLength(0);
    expect(await tiles(id)).toHaveLength(0);
    expect(await stored(keep)).toHaveLength(500);
  });

  it('answers 404 for a missing capture and 403 for another operator’s', async () => {
    expect((await postBinary(999_999, batch(0, 300))).status).toBe(404);
    const id = await newCapture();
    // An engineer runs captures but may not write another operator's (shared/protocol/roles.ts).
    const bytes = encodeReadingsF64(batch(0, 300));
    const other = await postBinary(id, bytes, 'engineer');
    expect(other.status).toBe(403);
    // A lead may write any capture.
    const lead = await postBinary(id, bytes, 'lead');
    expect(lead.body).toEqual({ accepted: 300, duplicates: 0, highestSeq: 299 });
    await demo.t.db.pool.query('DELETE FROM readings WHERE capture_id = $1', [id]);
    expect(await stored(id)).toHaveLength(0);
  });
});
