import type pg from 'pg';
import { buildTiles, loadSeries } from '../../server/services/readings.js';

/**
 * The tiles a rebuild from the capture's stored readings gives (buildTiles, the reference rule),
 * read inside a transaction that is rolled back, so the tiles ingest kept stay as they are. The
 * rows have the shape of the ingest tests' `tiles()` query, so the two compare directly.
 */
export async function rebuiltTiles(pool: pg.Pool, captureId: number) {
  const client = await pool.connect();
  try {
    await client.query('BEGIN');
    await buildTiles(client, captureId, await loadSeries(client, captureId));
    const res = await client.query(
      `SELECT level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value
       FROM reading_tiles WHERE capture_id = $1 ORDER BY level, bucket`,
      [captureId],
    );
    return res.rows;
  } finally {
    await client.query('ROLLBACK');
    client.release();
  }
}
