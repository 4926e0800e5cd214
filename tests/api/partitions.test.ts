import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import request from 'supertest';
import type pg from 'pg';
import { useDemoApp } from '../helpers/demoApp.js';
import {
  archiveReadingBlock,
  attachReadingBlock,
  findPgDump,
  listReadingBlocks,
} from '../../server/services/partitions.js';
import { migrator } from '../../server/migrations/index.js';

// Issue 15, "Scale past one machine": readings and their tiles are partitioned by range of
// capture id in blocks of 1,000 captures (migration 20261202-0200); a block's partitions are made
// ahead; every query of one capture reads one partition; a finished block can be archived.
const demo = useDemoApp();
const sql = async <R extends pg.QueryResultRow>(text: string, values: unknown[] = []) =>
  (await demo.t.db.pool.query<R>(text, values)).rows;
const DAY = 86_400_000;
const newCapture = () => demo.newCapture();

/** The next capture gets id `next` (the sequence hands out next − 1 + 1). */
const nextCaptureId = (next: number) =>
  sql(`SELECT setval('captures_id_seq', $1::bigint, false)`, [next]);

type R = { seq: number; t: number; value: number };
const batch = (from: number, n: number, base = demo.ids.crystal.nominal): R[] =>
  Array.from({ length: n }, (_, i) => ({
    seq: from + i,
    t: (from + i) * 1.0,
    value: base + Math.sin(from + i) * 0.01,
  }));

async function send(id: number, readings: R[]) {
  const res = await request(demo.t.app)
    .post(`/api/captures/${id}/readings`)
    .set(await demo.auth('technician'))
    .send({ readings });
  expect(res.status).toBe(200);
  return res.body as { accepted: number; duplicates: number; highestSeq: number };
}

async function finish(id: number) {
  const res = await request(demo.t.app)
    .post(`/api/captures/${id}/finish`)
    .set(await demo.auth('technician'));
  expect(res.status).toBe(200);
}

/** Every relation a plan (EXPLAIN … FORMAT JSON) reads, recursively. */
function relationsOf(plan: unknown, out = new Set<string>()): Set<string> {
  if (Array.isArray(plan)) for (const p of plan) relationsOf(p, out);
  else if (plan && typeof plan === 'object') {
    for (const [k, v] of Object.entries(plan)) {
      if (k === 'Relation Name' && typeof v === 'string') out.add(v);
      else relationsOf(v, out);
    }
  }
  return out;
}

/** Runs `fn` while recording every statement the app sends through its raw pool. */
async function recordQueries(fn: () => Promise<unknown>) {
  const pool = demo.t.db.pool as unknown as { query: (...a: unknown[]) => unknown };
  const original = pool.query;
  const seen: Array<{ text: string; values: unknown[] }> = [];
  pool.query = function (this: unknown, ...args: unknown[]) {
    const [a, b] = args;
    if (typeof a === 'string') seen.push({ text: a, values: (b as unknown[]) ?? [] });
    else if (a && typeof a === 'object' && 'text' in a)
      seen.push({
        text: (a as { text: string }).text,
        values: (a as { values?: unknown[] }).values ?? [],
      });
    return original.apply(this, args);
  };
  try {
    await fn();
  } finally {
    pool.query = original;
  }
  return seen;
}

describe('the partitioned schema', () => {
  it('partitions readings and reading_tiles by range of capture id, with no default partition', async () => {
    const parts = await sql<{ table: string; strategy: string; key: string; has_default: boolean }>(
      `SELECT p.partrelid::regclass::text AS table, p.partstrat AS strategy,
              pg_get_partkeydef(p.partrelid) AS key, p.partdefid <> 0 AS has_default
       FROM pg_partitioned_table p WHERE p.partrelid IN ('readings'::regclass, 'reading_tiles'::regclass)
       ORDER BY 1`,
    );
    expect(parts).toEqual([
      { table: 'reading_tiles', strategy: 'r', key: 'RANGE (capture_id)', has_default: false },
      { table: 'readings', strategy: 'r', key: 'RANGE (capture_id)', has_default: false },
    ]);
    // The keys, the cascade from captures, the checks and the triggers are the parent's.
    const cons = await sql<{ table: string; def: string }>(
      `SELECT conrelid::regclass::text AS table, pg_get_constraintdef(oid) AS def FROM pg_constraint
       WHERE conrelid IN ('readings'::regclass, 'reading_tiles'::regclass) ORDER BY 1, 2`,
    );
    expect(cons).toEqual([
      {
        table: 'reading_tiles',
        def: 'FOREIGN KEY (capture_id) REFERENCES captures(id) ON DELETE CASCADE',
      },
      { table: 'reading_tiles', def: 'PRIMARY KEY (capture_id, level, bucket)' },
      // The reading-flags check of migration 0100 (CHECK sorts first).
      {
        table: 'readings',
        def: expect.stringMatching(/^CHECK \(\(\(flags >= 0\) AND \(flags <= \d+\)\)\)$/),
      },
      // (The readings' foreign key gave way to a trigger on captures in migration 0230.)
      { table: 'readings', def: 'PRIMARY KEY (capture_id, seq)' },
    ]);
    const triggers = await sql<{ tgname: string }>(
      `SELECT tgname FROM pg_trigger WHERE tgrelid = 'readings'::regclass AND NOT tgisinternal`,
    );
    // The tile trigger (0110) and the seal-tamper triggers (0021) moved to the partitioned parent.
    expect(triggers.map((r) => r.tgname).sort()).toEqual([
      'readings_merge_tiles',
      'readings_sealed_delete',
      'readings_sealed_update',
    ]);
    // The demo lab's readings are in block 0, its partition, bounded 0 … 999.
    const bound = await sql<{ b: string }>(
      `SELECT pg_get_expr(relpartbound, oid) AS b FROM pg_class WHERE relname = 'readings_p000000'`,
    );
    expect(bound[0].b).toBe('FOR VALUES FROM (0) TO (1000)');
    const [{ n }] = await sql<{ n: number }>(
      'SELECT count(*)::int AS n FROM ONLY readings_p000000',
    );
    const [{ total }] = await sql<{ total: number }>('SELECT count(*)::int AS total FROM readings');
    expect(n).toBe(total);
  });

  it('makes the partitions of a capture opened in a new block (and the next block) before its readings arrive', async () => {
    await nextCaptureId(5000);
    expect(
      await sql(
        `SELECT to_regclass('readings_p000005') AS r, to_regclass('readings_p000006') AS s`,
      ),
    ).toEqual([{ r: null, s: null }]);
    const id = await newCapture();
    expect(id).toBe(5000);
    const made = await sql<{ name: string; bound: string }>(
      `SELECT c.relname AS name, pg_get_expr(c.relpartbound, c.oid) AS bound FROM pg_inherits i
       JOIN pg_class c ON c.oid = i.inhrelid
       WHERE i.inhparent IN ('readings'::regclass, 'reading_tiles'::regclass)
         AND c.relname ~ '_p00000[56]$' ORDER BY 1`,
    );
    expect(made).toEqual([
      { name: 'reading_tiles_p000005', bound: 'FOR VALUES FROM (5000) TO (6000)' },
      { name: 'reading_tiles_p000006', bound: 'FOR VALUES FROM (6000) TO (7000)' },
      { name: 'readings_p000005', bound: 'FOR VALUES FROM (5000) TO (6000)' },
      { name: 'readings_p000006', bound: 'FOR VALUES FROM (6000) TO (7000)' },
    ]);

    // Rows land in the block's partition; tiles form at ingest in the block's tile partition.
    const rs = batch(0, 300);
    expect(await send(id, rs)).toEqual({ accepted: 300, duplicates: 0, highestSeq: 299 });
    const where = await sql<{ part: string; n: number }>(
      `SELECT tableoid::regclass::text AS part, count(*)::int AS n FROM readings WHERE capture_id = $1 GROUP BY 1`,
      [id],
    );
    expect(where).toEqual([{ part: 'readings_p000005', n: 300 }]);
    const tiles = await sql<{
      part: string;
      bucket: number;
      min_seq: number;
      min_value: number;
      max_seq: number;
      max_value: number;
    }>(
      `SELECT tableoid::regclass::text AS part, bucket, min_seq, min_value, max_seq, max_value
       FROM reading_tiles WHERE capture_id = $1 AND level = 0 ORDER BY bucket`,
      [id],
    );
    // Level 0 groups 64 seqs and keeps the lowest and highest reading (the tile definition,
    // common practice, no source), computed here from the readings sent.
    const expected = [0, 1, 2, 3, 4].map((bucket) => {
      const run = rs.filter((r) => Math.floor(r.seq / 64) === bucket);
      const lo = run.reduce((a, b) => (b.value < a.value ? b : a));
      const hi = run.reduce((a, b) => (b.value > a.value ? b : a));
      return {
        part: 'reading_tiles_p000005',
        bucket,
        min_seq: lo.seq,
        min_value: lo.value,
        max_seq: hi.seq,
        max_value: hi.value,
      };
    });
    expect(tiles).toEqual(expected);
  });

  it('opens captures concurrently in a new block: one makes the partitions, none fails', async () => {
    await nextCaptureId(7999);
    const made = await Promise.all([newCapture(), newCapture(), newCapture()]);
    expect(made.sort((a, b) => a - b)).toEqual([7999, 8000, 8001]);
    for (const id of made) expect((await send(id, batch(0, 10))).accepted).toBe(10);
    const parts = await sql<{ part: string; n: number }>(
      `SELECT tableoid::regclass::text AS part, count(*)::int AS n FROM readings
       WHERE capture_id = ANY($1::int[]) GROUP BY 1 ORDER BY 1`,
      [made],
    );
    expect(parts).toEqual([
      { part: 'readings_p000007', n: 10 },
      { part: 'readings_p000008', n: 20 },
    ]);
    // The database function itself, called at once from five connections for a new block:
    // exactly one makes the tables, the others wait on the advisory lock and find them.
    const results = await Promise.all(
      [0, 1, 2, 3, 4].map(() =>
        sql<{ made: boolean }>('SELECT driftbench_ensure_readings_partition(40) AS made'),
      ),
    );
    expect(results.map((r) => r[0].made).filter(Boolean)).toHaveLength(1);
    expect(
      await sql(
        `SELECT to_regclass('readings_p000040')::text AS r, to_regclass('reading_tiles_p000040')::text AS t`,
      ),
    ).toEqual([{ r: 'readings_p000040', t: 'reading_tiles_p000040' }]);
  });

  it('deletes a capture’s readings and tiles with the capture, in whichever partition they are', async () => {
    const id = await newCapture();
    await send(id, batch(0, 100));
    await sql('DELETE FROM captures WHERE id = $1', [id]);
    expect(
      await sql(
        `SELECT (SELECT count(*)::int FROM readings WHERE capture_id = $1) AS r,
                (SELECT count(*)::int FROM reading_tiles WHERE capture_id = $1) AS t`,
        [id],
      ),
    ).toEqual([{ r: 0, t: 0 }]);
  });

  it('refuses a reading whose capture block has no partition instead of parking it anywhere', async () => {
    await expect(
      demo.t.db.pool.query(
        'INSERT INTO readings (capture_id, seq, t, value) VALUES (123456, 0, 0, 1)',
      ),
    ).rejects.toThrow(/no partition of relation "readings" found for row/);
  });

  it('keeps resends idempotent across partitions: (capture, seq) is unique within each block', async () => {
    const a = await newCapture(); // block 8
    await nextCaptureId(6100);
    const b = await newCapture(); // block 6
    expect([Math.floor(a / 1000), Math.floor(b / 1000)]).toEqual([8, 6]);
    const rs = batch(0, 200);
    for (const id of [a, b]) {
      expect(await send(id, rs)).toEqual({ accepted: 200, duplicates: 0, highestSeq: 199 });
      // The same batch again, and an overlapping one out of order: nothing is stored twice.
      expect(await send(id, rs)).toEqual({ accepted: 0, duplicates: 200, highestSeq: 199 });
      const overlap = [...batch(150, 100)].reverse();
      expect(await send(id, overlap)).toEqual({ accepted: 50, duplicates: 50, highestSeq: 249 });
    }
    const counts = await sql<{
      capture_id: number;
      part: string;
      n: number;
      distinct_seqs: number;
    }>(
      `SELECT capture_id, tableoid::regclass::text AS part, count(*)::int AS n, count(DISTINCT seq)::int AS distinct_seqs
       FROM readings WHERE capture_id = ANY($1::int[]) GROUP BY 1, 2 ORDER BY 1`,
      [[a, b]],
    );
    expect(counts).toEqual(
      [
        { capture_id: b, part: 'readings_p000006', n: 250, distinct_seqs: 250 },
        { capture_id: a, part: 'readings_p000008', n: 250, distinct_seqs: 250 },
      ].sort((x, y) => x.capture_id - y.capture_id),
    );
  });
});

describe('every query of one capture reads one partition', () => {
  it('a decimated read and an ingest name only the capture’s partitions (EXPLAIN)', async () => {
    const id = 5000;
    await send(id, batch(300, 9700)); // 10,000 readings: tiles of several levels
    const reads = await recordQueries(async () => {
      const res = await request(demo.t.app)
        .get(`/api/captures/${id}/readings?maxPoints=200`)
        .set(await demo.auth('viewer'));
      expect(res.status).toBe(200);
      expect(res.body.decimated).toBe(true);
    });
    const readingQueries = reads.filter((q) => /\breading(s|_tiles)\b/.test(q.text));
    expect(readingQueries.length).toBeGreaterThan(0);
    for (const q of readingQueries) {
      const [{ 'QUERY PLAN': plan }] = await sql<{ 'QUERY PLAN': unknown }>(
        `EXPLAIN (FORMAT JSON) ${q.text}`,
        q.values,
      );
      const rels = [...relationsOf(plan)].filter((r) => /^reading/.test(r));
      expect(rels.length).toBeGreaterThan(0);
      for (const r of rels) expect(r).toMatch(/^reading(s|_tiles)_p000005$/);
    }

    // The ingest: its statements, replayed under EXPLAIN ANALYZE in a transaction that is rolled back;
    // the transaction's own statistics say which partitions took rows.
    // A capture of another block, first batch: the plausibility seed reads its readings too.
    const fresh = await newCapture();
    const part = `_p${String(Math.floor(fresh / 1000)).padStart(6, '0')}`;
    expect(part).not.toBe('_p000005');
    const writes = await recordQueries(() => send(fresh, batch(0, 100)));
    expect(writes.filter((w) => /\bFROM readings\b/.test(w.text)).length).toBeGreaterThan(0);
    const insert = writes.find((q) => /INSERT INTO readings/.test(q.text));
    expect(insert).toBeDefined();
    const { float8Array, int2Array, int4Array } = await import('../../server/db/binaryArrays.js');
    const next = batch(100, 100);
    // A connection of its own: a pooled one may still hold statistics of its earlier
    // transactions (PostgreSQL flushes them at most once a second), which would name other blocks.
    const { default: pgLib } = await import('pg');
    const client = new pgLib.Client(demo.t.db.pool.options);
    await client.connect();
    try {
      await client.query('BEGIN');
      for (const q of writes.filter((w) => /\breadings\b/.test(w.text))) {
        // The insert goes again for the next 100 seqs (the recorded ones are stored now).
        const values =
          q === insert
            ? [
                q.values[0],
                int4Array(next.map((r) => r.seq)),
                float8Array(next.map((r) => r.t)),
                float8Array(next.map((r) => r.value)),
                int2Array(next.map(() => 0)),
                q.values[5],
                q.values[6],
                199,
                100,
              ]
            : q.values;
        const res = await client.query<{ 'QUERY PLAN': unknown }>(
          `EXPLAIN (ANALYZE, FORMAT JSON) ${q.text}`,
          values,
        );
        const rels = [...relationsOf(res.rows[0]['QUERY PLAN'])].filter((r) => /^reading/.test(r));
        for (const r of rels) expect(['readings', `readings${part}`]).toContain(r);
      }
      const wrote = await client.query<{ relname: string; n: number }>(
        `SELECT relname, n_tup_ins::int AS n FROM pg_stat_xact_user_tables
         WHERE relname LIKE 'reading%' AND n_tup_ins > 0 ORDER BY relname`,
      );
      expect(wrote.rows.map((r) => r.relname)).toEqual([`reading_tiles${part}`, `readings${part}`]);
      expect(wrote.rows[1].n).toBeGreaterThanOrEqual(100);
      await client.query('ROLLBACK');
    } finally {
      await client.end();
    }
  });
});

describe('archiving a block of captures', () => {
  const later = () => new Date(Date.now() + 31 * DAY);

  it('refuses a block with a recording capture, detaches a finished one, and its captures say their readings are archived', async () => {
    await nextCaptureId(9000); // blocks 5 … 8 are complete: no new capture is numbered in them
    const detach = (now?: Date) =>
      archiveReadingBlock(demo.t.db.pool, 5, {
        mode: 'detach',
        olderThanDays: 30,
        actor: 'test',
        now,
      });
    await expect(detach(later())).rejects.toMatchObject({
      status: 409,
      code: 'capture-recording',
      details: { block: 5, recording: [{ id: 5000, state: 'open' }] },
    });
    await finish(5000);
    // Finished just now: not older than 30 days.
    await expect(detach()).rejects.toMatchObject({ status: 409, code: 'not-archivable' });

    const listed = await listReadingBlocks(demo.t.db.pool, { olderThanDays: 30, now: later() });
    const byBlock = new Map(listed.map((b) => [b.block, b]));
    expect(byBlock.get(5)).toMatchObject({
      firstCaptureId: 5000,
      lastCaptureId: 5999,
      status: 'attached',
      captures: 1,
      recording: 0,
      readings: 10_000,
      complete: true,
      archivable: true,
      reason: null,
    });
    expect(byBlock.get(5)!.bytes).toBeGreaterThan(0);
    expect(byBlock.get(8)).toMatchObject({
      archivable: false,
      reason: expect.stringMatching(/still recording/),
    });
    expect(byBlock.get(9)).toMatchObject({ complete: false, archivable: false });

    const done = await detach(later());
    expect(done).toMatchObject({ block: 5, how: 'detached', captures: 1, readings: 10_000 });
    // The tables are kept, outside the partitioned parents.
    expect(
      await sql(
        `SELECT count(*)::int AS n, (SELECT count(*)::int FROM pg_inherits WHERE inhrelid = 'readings_p000005'::regclass) AS attached
         FROM readings_p000005`,
      ),
    ).toEqual([{ n: 10_000, attached: 0 }]);

    // The capture keeps its record; reads of its readings answer 410 with the reason.
    const viewer = await demo.auth('viewer');
    const capture = await request(demo.t.app).get('/api/captures/5000').set(viewer);
    expect(capture.status).toBe(200);
    expect(capture.body).toMatchObject({ state: 'finished', readingCount: 10_000 });
    for (const url of [
      '/api/captures/5000/readings?maxPoints=2000',
      '/api/captures/5000/readings',
      '/api/captures/5000/readings.csv',
      '/api/captures/5000/analysis',
    ]) {
      const res = await request(demo.t.app).get(url).set(viewer);
      expect(res.status, url).toBe(410);
      expect(res.body.error).toMatchObject({
        code: 'readings-archived',
        details: { block: 5, how: 'detached' },
      });
      expect(res.body.error.message).toMatch(/archived/);
    }
    // Its seal cannot be checked while archived, which is not a broken seal.
    const sealed = await request(demo.t.app).get('/api/captures/5000/seal').set(viewer);
    expect(sealed.status).toBe(200);
    expect(sealed.body).toMatchObject({ verified: null, archived: true, readings: 0 });
    expect(sealed.body.sha256).toMatch(/^[0-9a-f]{64}$/);
    // Captures of other blocks read as before.
    const other = await request(demo.t.app).get('/api/captures/6100/readings').set(viewer);
    expect(other.status).toBe(200);
    expect(other.body.readings).toHaveLength(250);
    expect(
      (await listReadingBlocks(demo.t.db.pool, { olderThanDays: 30 })).find((b) => b.block === 5),
    ).toMatchObject({ status: 'detached', archivable: false, reason: 'already detached' });

    // Attached back, the block reads again.
    await attachReadingBlock(demo.t.db.pool, 5);
    const back = await request(demo.t.app).get('/api/captures/5000/readings').set(viewer);
    expect(back.status).toBe(200);
    expect(back.body.readings).toHaveLength(10_000);
    const resealed = await request(demo.t.app).get('/api/captures/5000/seal').set(viewer);
    expect(resealed.body).toMatchObject({ verified: true, readings: 10_000 });
    expect(resealed.body.archived).toBeUndefined();
  });

  it.skipIf(!findPgDump())(
    'dumps a block with pg_dump and drops it; pg_restore and attach bring it back',
    async () => {
      const dir = mkdtempSync(path.join(os.tmpdir(), 'driftbench-archive-'));
      try {
        const done = await archiveReadingBlock(demo.t.db.pool, 5, {
          mode: 'dump',
          olderThanDays: 30,
          actor: 'test',
          now: later(),
          dumpDir: dir,
          databaseUrl: demo.t.db.url,
        });
        expect(done).toMatchObject({ block: 5, how: 'dumped', readings: 10_000 });
        expect(statSync(done.dumpFile!).size).toBeGreaterThan(0);
        expect(await sql(`SELECT to_regclass('readings_p000005') AS r`)).toEqual([{ r: null }]);
        const res = await request(demo.t.app)
          .get('/api/captures/5000/readings?maxPoints=500')
          .set(await demo.auth('viewer'));
        expect(res.status).toBe(410);
        expect(res.body.error.details).toMatchObject({ block: 5, how: 'dumped' });
        await expect(attachReadingBlock(demo.t.db.pool, 5)).rejects.toMatchObject({
          status: 409,
          code: 'not-restored',
        });

        const restore = spawnSync(
          'pg_restore',
          [`--dbname=${demo.t.db.url}`, '--no-owner', done.dumpFile!],
          {
            encoding: 'utf8',
          },
        );
        expect(restore.status, restore.stderr).toBe(0);
        await attachReadingBlock(demo.t.db.pool, 5);
        const back = await request(demo.t.app)
          .get('/api/captures/5000/readings')
          .set(await demo.auth('viewer'));
        expect(back.status).toBe(200);
        expect(back.body.readings).toHaveLength(10_000);
        expect(back.body.readings[9_999]).toMatchObject(batch(9_900, 100)[99]);
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    },
  );

  it('the migration goes down to one plain table and up again, a detached block included', async () => {
    await finish(6100);
    await request(demo.t.app)
      .post(`/api/captures/${6101}/finish`)
      .set(await demo.auth('technician'));
    // Through the command line this time (npm run readings:archive), on the test's database.
    const cli = (...args: string[]) =>
      spawnSync(process.execPath, ['--import', 'tsx', 'scripts/readings-archive.ts', ...args], {
        encoding: 'utf8',
        env: { ...process.env, DATABASE_URL: demo.t.db.url },
      });
    const listed = cli('list', '--older-than', '0');
    expect(listed.status, listed.stderr).toBe(0);
    expect(listed.stdout).toMatch(/^\s+6\s+6000–6999\s+attached\s+2\s+350\s.*yes$/m);
    expect(listed.stdout).toMatch(
      /^\s+8\s+8000–8999\s+attached\s.*no: \d captures are still recording$/m,
    );
    const refused = cli('detach', '8', '--older-than', '0');
    expect(refused.status).toBe(1);
    expect(refused.stderr).toMatch(/cannot be archived: \d captures are still recording/);
    const detached = cli('detach', '6', '--older-than', '0');
    expect(detached.status, detached.stderr).toBe(0);
    expect(detached.stdout).toMatch(
      /Block 6: 2 captures, 350 readings detached; kept as readings_p000006/,
    );
    const count = async () =>
      (
        await sql<{ r: number; t: number }>(
          `SELECT (SELECT count(*)::int FROM readings) AS r, (SELECT count(*)::int FROM reading_tiles) AS t`,
        )
      )[0];
    const online = await count();
    const [{ r6, t6 }] = await sql<{ r6: number; t6: number }>(
      `SELECT (SELECT count(*)::int FROM readings_p000006) AS r6, (SELECT count(*)::int FROM reading_tiles_p000006) AS t6`,
    );
    expect(r6).toBeGreaterThan(0);

    await migrator(demo.t.db.sequelize).down({ to: '20261202-0200-partitioned-readings' });
    expect(
      await sql(
        `SELECT relkind::text AS k FROM pg_class WHERE relname IN ('readings', 'reading_tiles') ORDER BY relname`,
      ),
    ).toEqual([{ k: 'r' }, { k: 'r' }]);
    expect(await count()).toEqual({ r: online.r + r6, t: online.t + t6 });

    await migrator(demo.t.db.sequelize).up();
    expect(
      await sql(
        `SELECT relkind::text AS k FROM pg_class WHERE relname IN ('readings', 'reading_tiles') ORDER BY relname`,
      ),
    ).toEqual([{ k: 'p' }, { k: 'p' }]);
    expect(await count()).toEqual({ r: online.r + r6, t: online.t + t6 });
    const back = await request(demo.t.app)
      .get('/api/captures/6100/readings')
      .set(await demo.auth('viewer'));
    expect(back.status).toBe(200);
    expect(back.body.readings).toHaveLength(250);
    // And the tile trigger works on the re-made parent.
    const id = await newCapture();
    await send(id, batch(0, 64));
    expect(
      await sql(
        `SELECT count(*)::int AS n FROM reading_tiles WHERE capture_id = $1 AND level = 0`,
        [id],
      ),
    ).toEqual([{ n: 1 }]);
  }, 120_000); // three command-line runs, each a fresh tsx process
});
