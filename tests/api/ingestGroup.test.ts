import { describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { useDemoServer } from '../helpers/demoServer.js';
import { rebuiltTiles } from '../helpers/tiles.js';
import { COPY_MIN_BATCH } from '../../server/services/ingest.js';
import {
  GROUPS_IN_FLIGHT,
  groupStats,
  type GroupStats,
} from '../../server/services/ingestGroup.js';
import { ServerMessage } from '../../shared/protocol/live.js';
import { socketProtocols } from '../../shared/protocol/socketAuth.js';
import type { ReadingIn } from '../../shared/protocol/captures.js';

// Issue 15, live path: small readings batches of many captures share one statement (group
// commit, server/services/ingestGroup.ts). A real server on a real PostgreSQL, real HTTP requests
// sent at once, a real WebSocket watcher. Every expected count below follows from the batches
// sent (common practice, no source); tiles are compared with the ones finish rebuilds.
const demo = useDemoServer({ demoStory: false, mail: false });
const { token, api } = demo;

const pool = () => demo.server.db.pool;

let place: { dutId: number; checkpointId: number } | undefined;
async function newCapture(at?: { dutId: number; checkpointId: number }): Promise<number> {
  if (!at && !place) {
    const list = await api('engineer', 'GET', '/api/studies');
    const study = await api('engineer', 'GET', `/api/studies/${list.body.studies[0].id}`);
    place = { dutId: study.body.duts[0].id, checkpointId: study.body.checkpoints[0].id };
  }
  const res = await api('technician', 'POST', '/api/captures', {
    ...(at ?? place),
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
  });
  expect(res.status).toBe(201);
  return res.body.id as number;
}

/** Readings from..to−1; values repeat (ties in the tiles), `shift` makes a second version. */
const batch = (from: number, to: number, shift = 0): ReadingIn[] =>
  Array.from({ length: to - from }, (_, i) => {
    const seq = from + i;
    return { seq, t: seq * 0.5 + 1e-9, value: 16e6 + ((seq * 7919) % 11) * 1e-3 + shift };
  });

const post = (role: string, id: number, readings: ReadingIn[]) =>
  api(role, 'POST', `/api/captures/${id}/readings`, { readings });

async function stored(id: number) {
  const res = await pool().query<{ seq: number; t: number; value: number; flags: number }>(
    'SELECT seq, t, value, flags FROM readings WHERE capture_id = $1 ORDER BY seq',
    [id],
  );
  return res.rows;
}
async function counters(id: number) {
  const res = await pool().query<{ reading_count: number; highest_seq: number; state: string }>(
    'SELECT reading_count, highest_seq, state FROM captures WHERE id = $1',
    [id],
  );
  return res.rows[0];
}
async function tiles(id: number) {
  const res = await pool().query(
    `SELECT level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value
     FROM reading_tiles WHERE capture_id = $1 ORDER BY level, bucket`,
    [id],
  );
  return res.rows;
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
async function until(what: string, ok: () => Promise<boolean> | boolean, ms = 10_000) {
  const end = Date.now() + ms;
  while (!(await ok())) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await sleep(10);
  }
}

/**
 * Sends `requests` so that all of them travel in ONE group statement, and answers their
 * responses in order with the queue's counters before and after. Every slot for a group in
 * flight is taken by a request of a capture whose row this test holds locked; the requests under
 * test then queue behind them, and once they all wait, the lock is let go: the first slot to
 * free takes the whole queue as one group.
 */
async function inOneGroup(
  requests: Array<() => Promise<{ status: number; body: any }>>,
  whileQueued?: () => Promise<unknown>,
) {
  const blockers = await Promise.all(Array.from({ length: GROUPS_IN_FLIGHT }, () => newCapture()));
  const holder = await pool().connect();
  try {
    await holder.query('BEGIN');
    await holder.query('SELECT 1 FROM captures WHERE id = ANY($1) FOR UPDATE', [blockers]);
    const blocked = blockers.map((id) => post('technician', id, batch(0, 3)));
    const db = (await holder.query<{ db: string }>('SELECT current_database() AS db')).rows[0].db;
    await until('the blockers to wait for the row lock', async () => {
      const res = await pool().query<{ n: number }>(
        `SELECT count(*)::int AS n FROM pg_stat_activity
         WHERE datname = $1 AND wait_event_type = 'Lock' AND query LIKE '%readings%'`,
        [db],
      );
      return res.rows[0].n === GROUPS_IN_FLIGHT;
    });
    const before = groupStats(pool());
    // One at a time into the queue, so the group holds them in this order.
    const sent: Array<Promise<{ status: number; body: any }>> = [];
    for (const r of requests) {
      sent.push(r());
      await until('the request to queue', () => groupStats(pool()).waiting === sent.length);
    }
    await whileQueued?.();
    await holder.query('COMMIT');
    const answers = await Promise.all(sent);
    for (const b of await Promise.all(blocked)) expect(b.status).toBe(200);
    const after = groupStats(pool());
    return { answers, before, after };
  } finally {
    await holder.query('ROLLBACK').catch(() => undefined);
    holder.release();
  }
}

function expectOneGroupOf(n: number, before: GroupStats, after: GroupStats) {
  expect(after.groups - before.groups).toBe(1);
  expect(after.groupedRequests - before.groupedRequests).toBe(n);
  expect(after.largestGroup).toBeGreaterThanOrEqual(n);
}

function watcher(): Promise<{ ws: WebSocket; messages: ServerMessage[] }> {
  return token('viewer').then(
    (tk) =>
      new Promise((resolve, reject) => {
        const ws = new WebSocket(
          `${demo.server.url.replace('http', 'ws')}/ws`,
          socketProtocols(tk),
        );
        const messages: ServerMessage[] = [];
        ws.on('message', (data) => {
          const msg = JSON.parse(String(data)) as ServerMessage;
          messages.push(msg);
          if (msg.type === 'hello') resolve({ ws, messages });
        });
        ws.on('error', reject);
      }),
  );
}

describe('group commit of small readings batches', () => {
  it('stores the batches of many captures sent at once in one statement, each once, with counters and tiles right', async () => {
    const ids: number[] = [];
    for (let i = 0; i < 20; i++) ids.push(await newCapture());
    // Two batches per capture (200 readings each: below COPY_MIN_BATCH, so the small path), the
    // second carrying the seqs after the first — as a bench with a backlog sends them.
    expect(200).toBeLessThan(COPY_MIN_BATCH);
    const requests = ids.flatMap((id) => [
      () => post('technician', id, batch(0, 200)),
      () => post('technician', id, batch(200, 400)),
    ]);
    const { answers, before, after } = await inOneGroup(requests);
    expectOneGroupOf(40, before, after);
    answers.forEach((a, k) => {
      expect(a.status).toBe(200);
      // Each request answered as its own statement would: the first sees 199, the second 399.
      expect(a.body).toEqual({ accepted: 200, duplicates: 0, highestSeq: k % 2 ? 399 : 199 });
    });
    for (const id of ids) {
      const rows = await stored(id);
      expect(rows.map((r) => r.seq)).toEqual(Array.from({ length: 400 }, (_, i) => i));
      const sent = batch(0, 400);
      rows.forEach((r, i) => expect(Object.is(r.value, sent[i].value)).toBe(true));
      expect(await counters(id)).toEqual({ reading_count: 400, highest_seq: 399, state: 'open' });
    }
    // Tiles merged by the trigger for the whole group equal a rebuild from the rows, and finish
    // keeps them as they are.
    for (const id of ids.slice(0, 4)) {
      const open = await tiles(id);
      expect((await api('technician', 'POST', `/api/captures/${id}/finish`)).status).toBe(200);
      expect(await tiles(id)).toEqual(open);
      const finished = await rebuiltTiles(pool(), id);
      const top = Math.max(...finished.map((r) => r.level as number));
      expect(top).toBeGreaterThan(1);
      expect(open.filter((r) => r.level <= top)).toEqual(finished);
    }
  });

  it('keeps every reading once when many captures send at once without any arranging', async () => {
    const ids: number[] = [];
    for (let i = 0; i < 30; i++) ids.push(await newCapture());
    const before = groupStats(pool());
    // Ten rounds of ten readings per capture, every capture's round sent at once, and a resend
    // of each capture's first round mixed into the last one.
    for (let round = 0; round < 10; round++) {
      const answers = await Promise.all(
        ids.flatMap((id) => [
          post('technician', id, batch(round * 10, round * 10 + 10)),
          ...(round === 9 ? [post('technician', id, batch(0, 10))] : []),
        ]),
      );
      for (const a of answers) expect(a.status).toBe(200);
    }
    const after = groupStats(pool());
    // Under 30 requests at once the queue did gather (how much depends on the machine).
    expect(after.groups).toBeGreaterThan(before.groups);
    for (const id of ids) {
      expect(await counters(id)).toEqual({ reading_count: 100, highest_seq: 99, state: 'open' });
      expect((await stored(id)).map((r) => r.seq)).toEqual(
        Array.from({ length: 100 }, (_, i) => i),
      );
    }
  });

  it('answers each request of a mixed group as if alone and stores only the good ones', async () => {
    const good = [await newCapture(), await newCapture(), await newCapture()];
    const finished = await newCapture();
    await post('technician', finished, batch(0, 5));
    expect((await api('technician', 'POST', `/api/captures/${finished}/finish`)).status).toBe(200);
    const aborted = await newCapture();
    expect(
      (
        await api('technician', 'POST', `/api/captures/${aborted}/abort`, {
          reason: 'Fixture came loose',
        })
      ).status,
    ).toBe(200);
    const foreign = await newCapture(); // the technician's; the engineer may not write it
    const deleted = await newCapture(); // deleted while its request waits in the queue
    const stalled = await newCapture();
    await post('technician', stalled, batch(0, 5));
    await pool().query(`UPDATE captures SET state = 'stalled' WHERE id = $1`, [stalled]);
    // A capture of a study under review (another study, so the good captures stay writable).
    const study = await api('engineer', 'POST', '/api/studies', {
      title: 'Group commit, locked study',
      allowSimulated: true,
    });
    expect(study.status).toBe(201);
    const cp = await api('engineer', 'POST', `/api/studies/${study.body.id}/checkpoints`, {
      name: 'Baseline',
    });
    const dut = await api('engineer', 'POST', `/api/studies/${study.body.id}/duts`, {
      label: 'Y1',
      kind: 'crystal',
      nominal: 16e6,
      unit: 'Hz',
      limit: 1,
      limitUnit: 'ppm',
    });
    const locked = await newCapture({ dutId: dut.body.id, checkpointId: cp.body.id });
    await pool().query(`UPDATE studies SET status = 'in-review' WHERE id = $1`, [study.body.id]);

    const live = await watcher();
    live.ws.send(JSON.stringify({ type: 'watch', captureId: stalled }));
    await sleep(100);

    const requests = [
      () => post('technician', good[0], batch(0, 10)),
      () => post('technician', finished, batch(5, 10)),
      () => post('technician', aborted, batch(0, 10)),
      () => post('engineer', foreign, batch(0, 10)),
      () => post('technician', good[1], batch(0, 10)),
      () => post('technician', locked, batch(0, 10)),
      () => post('technician', deleted, batch(0, 10)),
      () => post('technician', stalled, batch(5, 10)),
      () => post('lead', foreign, batch(0, 10)), // a lead may write any capture
      () => post('technician', good[2], batch(0, 10)),
    ];
    // The deleted capture goes while its request waits in the queue.
    const { answers, before, after } = await inOneGroup(requests, () =>
      pool().query('DELETE FROM captures WHERE id = $1', [deleted]),
    );
    expectOneGroupOf(10, before, after);
    const [g0, fin, abo, eng, g1, lck, del, stl, lead, g2] = answers;
    for (const g of [g0, g1, g2])
      expect(g).toEqual({ status: 200, body: { accepted: 10, duplicates: 0, highestSeq: 9 } });
    expect(fin.status).toBe(409);
    expect(fin.body.error.code).toBe('capture-finished');
    expect(abo.status).toBe(409);
    expect(abo.body.error.code).toBe('capture-aborted');
    expect(eng.status).toBe(403);
    expect(lck.status).toBe(409);
    expect(lck.body.error.code).toBe('study-locked');
    expect(del.status).toBe(404);
    expect(stl).toEqual({ status: 200, body: { accepted: 5, duplicates: 0, highestSeq: 9 } });
    expect(lead).toEqual({ status: 200, body: { accepted: 10, duplicates: 0, highestSeq: 9 } });

    for (const id of good) expect((await stored(id)).length).toBe(10);
    expect((await stored(finished)).length).toBe(5);
    expect((await stored(aborted)).length).toBe(0);
    expect((await stored(locked)).length).toBe(0);
    expect((await stored(foreign)).length).toBe(10);
    expect(await counters(locked)).toEqual({ reading_count: 0, highest_seq: -1, state: 'open' });
    // The stalled capture is open again, audited and announced to its watcher.
    expect(await counters(stalled)).toEqual({ reading_count: 10, highest_seq: 9, state: 'open' });
    const audited = await pool().query(
      `SELECT 1 FROM audit_events WHERE action = 'capture.resume' AND subject_id = $1`,
      [stalled],
    );
    expect(audited.rowCount).toBe(1);
    await until('the watcher to hear the capture open again', () =>
      live.messages.some(
        (m) => m.type === 'capture-state' && m.captureId === stalled && m.state === 'open',
      ),
    );
    live.ws.close();
    await pool().query(`UPDATE studies SET status = 'draft' WHERE id = $1`, [study.body.id]);
  });

  it('treats two requests of one capture in a group like two statements in order', async () => {
    const id = await newCapture();
    const other = await newCapture();
    const live = await watcher();
    live.ws.send(JSON.stringify({ type: 'watch', captureId: id }));
    await sleep(100);
    const { answers, before, after } = await inOneGroup([
      () => post('technician', id, batch(0, 100)),
      () => post('technician', other, batch(0, 30)),
      // Overlaps the first on 50–99 with other values: the first request's readings win.
      () => post('technician', id, batch(50, 150, 1)),
      () => post('technician', id, batch(0, 10, 2)), // a resend: nothing new
      // The engineer may not write it: refused, and its readings do not shadow the next ones.
      () => post('engineer', id, batch(150, 170, 3)),
      () => post('technician', id, batch(140, 170)),
    ]);
    expectOneGroupOf(6, before, after);
    expect(answers.map((a) => a.status)).toEqual([200, 200, 200, 200, 403, 200]);
    expect(answers[0].body).toEqual({ accepted: 100, duplicates: 0, highestSeq: 99 });
    expect(answers[1].body).toEqual({ accepted: 30, duplicates: 0, highestSeq: 29 });
    expect(answers[2].body).toEqual({ accepted: 50, duplicates: 50, highestSeq: 149 });
    expect(answers[3].body).toEqual({ accepted: 0, duplicates: 10, highestSeq: 149 });
    expect(answers[5].body).toEqual({ accepted: 20, duplicates: 10, highestSeq: 169 });
    const rows = await stored(id);
    expect(rows.map((r) => r.seq)).toEqual(Array.from({ length: 170 }, (_, i) => i));
    const want = [...batch(0, 100), ...batch(100, 150, 1), ...batch(150, 170)];
    rows.forEach((r, i) => expect(Object.is(r.value, want[i].value)).toBe(true));
    expect(await counters(id)).toEqual({ reading_count: 170, highest_seq: 169, state: 'open' });

    // The watcher got every stored reading exactly once, as stored.
    await until('the watcher to have 170 readings', () => seen().length >= 170);
    await sleep(200);
    function seen() {
      return live.messages.flatMap((m) =>
        m.type === 'readings-batch' && m.captureId === id ? m.readings : [],
      );
    }
    const got = seen().sort((a, b) => a.seq - b.seq);
    expect(got.map((r) => r.seq)).toEqual(Array.from({ length: 170 }, (_, i) => i));
    got.forEach((r, i) => expect(Object.is(r.value, want[i].value)).toBe(true));
    live.ws.close();
  });

  it('runs each request alone when the group statement fails, so one bad request fails only itself', async () => {
    const ids = [await newCapture(), await newCapture(), await newCapture()];
    // A row PostgreSQL refuses (a trigger made for this test): value 666 in any reading.
    await pool().query(`CREATE FUNCTION test_refuse_666() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN
        IF NEW.value = 666 THEN RAISE EXCEPTION 'refused by the test'; END IF;
        RETURN NEW;
      END $$`);
    await pool().query(
      'CREATE TRIGGER test_refuse_666 BEFORE INSERT ON readings FOR EACH ROW EXECUTE FUNCTION test_refuse_666()',
    );
    try {
      const bad = batch(0, 10);
      bad[4].value = 666;
      const { answers, before, after } = await inOneGroup([
        () => post('technician', ids[0], batch(0, 10)),
        () => post('technician', ids[1], bad),
        () => post('technician', ids[2], batch(0, 10)),
        () => post('technician', ids[0], batch(10, 20)),
      ]);
      expectOneGroupOf(4, before, after);
      expect(after.fallbacks - before.fallbacks).toBe(1);
      expect(answers.map((a) => a.status)).toEqual([200, 500, 200, 200]);
      expect(answers[0].body).toEqual({ accepted: 10, duplicates: 0, highestSeq: 9 });
      expect(answers[3].body).toEqual({ accepted: 10, duplicates: 0, highestSeq: 19 });
      expect((await stored(ids[0])).length).toBe(20);
      expect((await stored(ids[1])).length).toBe(0);
      expect((await stored(ids[2])).length).toBe(10);
      expect(await counters(ids[1])).toEqual({ reading_count: 0, highest_seq: -1, state: 'open' });
      expect(await counters(ids[0])).toEqual({ reading_count: 20, highest_seq: 19, state: 'open' });
    } finally {
      await pool().query('DROP TRIGGER test_refuse_666 ON readings');
      await pool().query('DROP FUNCTION test_refuse_666()');
    }
  });
  it('rewrites only the tiles a batch changes (migration 20261202-0300), and they stay exact', async () => {
    const id = await newCapture();
    // Values 16e6 + 0…10 mHz; a later batch within that range changes no upper-level tile.
    expect((await post('technician', id, batch(0, 100))).status).toBe(200);
    const version = async () =>
      (
        await pool().query<{ level: number; v: string }>(
          'SELECT level, xmin::text AS v FROM reading_tiles WHERE capture_id = $1 AND level >= 1 ORDER BY level',
          [id],
        )
      ).rows;
    const before = await version();
    expect(before).toHaveLength(20);
    const inside = batch(100, 110).map((r) => ({ ...r, value: 16e6 + 5e-3 }));
    expect((await post('technician', id, inside)).status).toBe(200);
    expect(await version()).toEqual(before);
    // A new highest value rewrites every level (each level's one tile holds it now).
    const high = batch(110, 111).map((r) => ({ ...r, value: 16e6 + 1 }));
    expect((await post('technician', id, high)).status).toBe(200);
    const after = await version();
    after.forEach((row, i) => expect(row.v).not.toBe(before[i].v));
    const open = await tiles(id);
    expect((await api('technician', 'POST', `/api/captures/${id}/finish`)).status).toBe(200);
    expect(await tiles(id)).toEqual(open);
    const finished = await rebuiltTiles(pool(), id);
    const top = Math.max(...finished.map((r) => r.level as number));
    expect(open.filter((r) => r.level <= top)).toEqual(finished);
  });
});
