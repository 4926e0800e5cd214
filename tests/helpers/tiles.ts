import { expect } from 'vitest';
import type pg from 'pg';
import { buildTiles, loadSeries } from '../../server/services/readings.js';
import type { DemoApp } from './demoApp.js';

/** The capture's stored min/max tiles, level by level, in bucket order. */
export async function keptTiles(db: pg.Pool | pg.PoolClient, captureId: number) {
  const res = await db.query(
    `SELECT level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value
     FROM reading_tiles WHERE capture_id = $1 ORDER BY level, bucket`,
    [captureId],
  );
  return res.rows;
}

/**
 * The tiles a rebuild from the capture's stored readings gives (buildTiles, the reference rule),
 * read inside a transaction that is rolled back, so the tiles ingest kept stay as they are. The
 * rows have the shape of {@link keptTiles}, so the two compare directly.
 */
export async function rebuiltTiles(pool: pg.Pool, captureId: number) {
  const client = await pool.connect();
  try {
    await client.query('BEGIN');
    await buildTiles(client, captureId, await loadSeries(client, captureId));
    return await keptTiles(client, captureId);
  } finally {
    await client.query('ROLLBACK');
    client.release();
  }
}

/**
 * Finishes the open capture (as `role`) and checks that finish leaves the tiles ingest kept as
 * they were, and that they equal a rebuild from the stored rows. buildTiles stops at the first
 * level whose one tile covers the capture; the live tiles go on to level 20 with that same single
 * tile repeated, so the levels above the rebuild's top are compared with its top tile. Answers the
 * finish response.
 */
export async function expectTilesAsRebuilt(demo: DemoApp, id: number, role = 'technician') {
  const pool = demo.t.db.pool;
  const open = await keptTiles(pool, id);
  const fin = await demo.call(role, 'post', `/api/captures/${id}/finish`);
  expect(fin.status, JSON.stringify(fin.body)).toBe(200);
  expect(await keptTiles(pool, id)).toEqual(open);
  const finished = await rebuiltTiles(pool, id);
  const top = Math.max(...finished.map((r) => r.level as number));
  expect(top).toBeGreaterThan(5);
  expect(open.filter((r) => r.level <= top)).toEqual(finished);
  for (const r of open.filter((x) => x.level > top)) {
    const { level: _l, ...rest } = r;
    const { level: _t, ...atTop } = finished[finished.length - 1];
    expect(rest).toEqual(atTop);
  }
  return fin;
}
