import { describe, expect, it } from 'vitest';
import type pg from 'pg';
import { useDemoApp } from '../helpers/demoApp.js';
import { expectTilesAsRebuilt } from '../helpers/tiles.js';
import { batch, storedCounters, storedRows } from '../helpers/ingest.js';
import { copyQueueOf, MAX_COALESCED_READINGS } from '../../server/services/ingestCopy.js';
import { mergeBatchTiles, tilesOfBatch } from '../../server/services/liveTiles.js';
import type { ReadingIn } from '../../shared/protocol/captures.js';

// Issue 15, one stream: long batches of one capture that queue while its COPY transaction runs go
// together into the next one (server/services/ingestCopy.ts) — one lock, one COPY in seq order,
// one tile merge, one commit — and each request is answered with its own counts. To make batches
// queue for certain, the test holds the capture's row lock on a connection of its own while they
// arrive: the first batch waits for the lock in PostgreSQL, the others wait in the server's queue.
const demo = useDemoApp();
const { newCapture, postBinary } = demo;

async function waitFor(what: string, ok: () => boolean, ms = 20_000) {
  const end = Date.now() + ms;
  while (!ok()) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 10));
  }
}

/**
 * Sends `first` and, once it waits for the capture's row lock (held here), `rest` in the order
 * given; lets go of the lock once all of `rest` wait in the server's queue. Answers in the order
 * sent.
 */
async function sendQueued(id: number, first: ReadingIn[], rest: ReadingIn[][]) {
  const holder: pg.PoolClient = await demo.t.db.pool.connect();
  try {
    await holder.query('BEGIN');
    await holder.query('SELECT 1 FROM captures WHERE id = $1 FOR UPDATE', [id]);
    const head = postBinary(id, first).then((r) => r);
    await waitFor('the first batch to start its transaction', () => copyQueueOf(id).running);
    const others = rest.map((r) => postBinary(id, r).then((x) => x));
    await waitFor(`${rest.length} batches to queue`, () => copyQueueOf(id).waiting === rest.length);
    await holder.query('COMMIT');
    return await Promise.all([head, ...others]);
  } finally {
    await holder.query('ROLLBACK').catch(() => undefined);
    holder.release();
  }
}

const stored = (id: number) => storedRows(demo.t.db.pool, id);
const capture = (id: number) => storedCounters(demo.t.db.pool, id);
const seqsOf = (rows: { seq: number }[]) => rows.map((r) => r.seq);
const range = (from: number, to: number) => Array.from({ length: to - from }, (_, i) => from + i);

describe('batches of one capture queued together go into one COPY transaction', () => {
  it('stores every reading once, answers each batch with its own counts, in one transaction', async () => {
    const id = await newCapture();
    // Sent out of order behind the first; 5,000 is no multiple of 64, so tiles straddle batches.
    const res = await sendQueued(id, batch(0, 5000), [
      batch(15_000, 20_000),
      batch(5000, 10_000),
      batch(10_000, 15_000),
    ]);
    expect(res.map((r) => r.status)).toEqual([200, 200, 200, 200]);
    expect(res[0].body).toEqual({ accepted: 5000, duplicates: 0, highestSeq: 4999 });
    for (const r of res.slice(1))
      expect(r.body).toEqual({ accepted: 5000, duplicates: 0, highestSeq: 19_999 });
    const rows = await stored(id);
    expect(seqsOf(rows)).toEqual(range(0, 20_000));
    const sent = batch(0, 20_000);
    rows.forEach((r, i) => {
      expect(Object.is(r.t, sent[i].t)).toBe(true);
      expect(Object.is(r.value, sent[i].value)).toBe(true);
    });
    // Rows stored by one transaction carry its id (xmin): the first batch's, and one for the rest.
    expect(new Set(rows.slice(0, 5000).map((r) => r.tx)).size).toBe(1);
    expect(new Set(rows.slice(5000).map((r) => r.tx)).size).toBe(1);
    expect(rows[5000].tx).not.toBe(rows[0].tx);
    expect(await capture(id)).toEqual({ reading_count: 20_000, highest_seq: 19_999 });
    await expectTilesAsRebuilt(demo, id);
  });

  it('sends a resend in the group the conflict-safe way and copies the rest together', async () => {
    const id = await newCapture();
    const res = await sendQueued(id, batch(0, 5000), [
      batch(10_000, 15_000),
      batch(0, 5000), // a resend of the first batch: below the highest stored seq once it lands
      batch(5000, 10_000),
      batch(20_000, 25_000), // after a gap: a transaction of its own
    ]);
    expect(res.map((r) => r.status)).toEqual([200, 200, 200, 200, 200]);
    expect(res[0].body).toEqual({ accepted: 5000, duplicates: 0, highestSeq: 4999 });
    expect(res[2].body).toMatchObject({ accepted: 0, duplicates: 5000 });
    expect(res[1].body).toMatchObject({ accepted: 5000, duplicates: 0 });
    expect(res[3].body).toMatchObject({ accepted: 5000, duplicates: 0 });
    expect(res[4].body).toEqual({ accepted: 5000, duplicates: 0, highestSeq: 24_999 });
    const rows = await stored(id);
    expect(seqsOf(rows)).toEqual([...range(0, 15_000), ...range(20_000, 25_000)]);
    expect(new Set(rows.slice(5000, 15_000).map((r) => r.tx)).size).toBe(1);
    expect(rows[15_000].tx).not.toBe(rows[14_999].tx);
    expect(await capture(id)).toEqual({ reading_count: 20_000, highest_seq: 24_999 });
    // The gap filled afterwards (the conflict-safe way: it lies below the highest stored seq).
    const gap = await postBinary(id, batch(15_000, 20_000));
    expect(gap.body).toEqual({ accepted: 5000, duplicates: 0, highestSeq: 24_999 });
    expect(seqsOf(await stored(id))).toEqual(range(0, 25_000));
    await expectTilesAsRebuilt(demo, id);
  });

  it('answers every batch of a failed transaction with an error and stores none of them', async () => {
    const id = await newCapture();
    // A real failure inside the COPY: a row trigger refusing one reading of this capture, put on
    // `readings` for this test only (a row trigger of a partitioned table reaches its partitions).
    await demo.t.db.pool
      .query(`CREATE FUNCTION test_refuse_reading() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN
        IF NEW.capture_id = ${id} AND NEW.seq = 12345 THEN RAISE EXCEPTION 'refused for the test'; END IF;
        RETURN NEW;
      END $$`);
    await demo.t.db.pool.query(
      'CREATE TRIGGER test_refuse_reading BEFORE INSERT ON readings FOR EACH ROW EXECUTE FUNCTION test_refuse_reading()',
    );
    let res: Awaited<ReturnType<typeof sendQueued>>;
    try {
      res = await sendQueued(id, batch(0, 5000), [
        batch(5000, 10_000),
        batch(10_000, 15_000),
        batch(15_000, 20_000),
      ]);
    } finally {
      await demo.t.db.pool.query('DROP TRIGGER test_refuse_reading ON readings');
      await demo.t.db.pool.query('DROP FUNCTION test_refuse_reading()');
    }
    expect(res[0].status).toBe(200);
    for (const r of res.slice(1)) {
      expect(r.status).toBe(500);
      expect(r.body.error).toBeDefined();
    }
    expect(seqsOf(await stored(id))).toEqual(range(0, 5000));
    expect(await capture(id)).toEqual({ reading_count: 5000, highest_seq: 4999 });
    // The uploader sends them again: all of them stored, once.
    const again = await Promise.all([
      postBinary(id, batch(5000, 10_000)),
      postBinary(id, batch(10_000, 15_000)),
      postBinary(id, batch(15_000, 20_000)),
    ]);
    expect(again.map((r) => r.body.accepted)).toEqual([5000, 5000, 5000]);
    expect(seqsOf(await stored(id))).toEqual(range(0, 20_000));
    expect(await capture(id)).toEqual({ reading_count: 20_000, highest_seq: 19_999 });
    await expectTilesAsRebuilt(demo, id);
  });

  it('keeps a group under MAX_COALESCED_READINGS', async () => {
    // A design choice (no source): eight batches of 5,000 fill one group, a ninth goes after.
    expect(MAX_COALESCED_READINGS).toBe(40_000);
    const id = await newCapture();
    const rest = Array.from({ length: 9 }, (_, k) => batch(5000 * (k + 1), 5000 * (k + 2)));
    const res = await sendQueued(id, batch(0, 5000), rest);
    expect(res.every((r) => r.status === 200 && r.body.accepted === 5000)).toBe(true);
    const rows = await stored(id);
    expect(seqsOf(rows)).toEqual(range(0, 50_000));
    expect(new Set(rows.slice(5000, 45_000).map((r) => r.tx)).size).toBe(1);
    expect(rows[45_000].tx).not.toBe(rows[44_999].tx);
  });
});

describe('mergeBatchTiles', () => {
  it('merges the tiles of consecutive batches into those of the batches joined', () => {
    // Worked by hand (common practice, no source): seqs 60–63 | 64–66 | 67–69 in three parts.
    // Run 0 holds 60–63, run 1 holds 64–69; every higher level has one bucket 0.
    const seq = [60, 61, 62, 63, 64, 65, 66, 67, 68, 69];
    const value = [5, 1, 1, 9, 3, 9, 9, 2, 2, 0];
    const t = seq.map((s) => s / 10);
    const part = (a: number, b: number) =>
      tilesOfBatch(seq.slice(a, b), t.slice(a, b), value.slice(a, b));
    const m = mergeBatchTiles([part(0, 4), part(4, 7), part(7, 10)]);
    expect(m.level.length).toBe(2 + 20);
    expect(m.bucket.slice(0, 2)).toEqual([0, 1]);
    // Run 0: min 1 at 61 (tie with 62 goes to 61), max 9 at 63. Run 1: min 0 at 69, max 9 at 65.
    expect(m.minSeq.slice(0, 2)).toEqual([61, 69]);
    expect(m.maxSeq.slice(0, 2)).toEqual([63, 65]);
    // Above: min 0 at 69, max 9 at 63 (the earliest of the three nines).
    for (let k = 2; k < m.level.length; k++) {
      expect([m.level[k], m.bucket[k], m.minSeq[k], m.maxSeq[k]]).toEqual([k - 1, 0, 69, 63]);
      expect([m.minValue[k], m.maxValue[k], m.maxT[k]]).toEqual([0, 9, 6.3]);
    }
  });
});
