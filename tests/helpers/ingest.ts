import type pg from 'pg';
import type { ReadingIn } from '../../shared/protocol/captures.js';

/**
 * Readings seq from…to−1 for the ingest tests: values from `levels` repeating levels (so tile
 * buckets have ties) and a little noise on t, so a careless decimal round trip would show.
 */
export const batch = (from: number, to: number, levels = 7): ReadingIn[] =>
  Array.from({ length: to - from }, (_, i) => {
    const seq = from + i;
    return { seq, t: seq * 1.000001 + 1e-9, value: 16e6 + ((seq * 7919) % levels) * 1e-3 };
  });

/** The capture's stored rows in seq order, with the id of the transaction that stored each (xmin). */
export async function storedRows(pool: pg.Pool, id: number) {
  const res = await pool.query<{
    seq: number;
    t: number;
    value: number;
    flags: number;
    tx: string;
  }>(
    'SELECT seq, t, value, flags, xmin::text AS tx FROM readings WHERE capture_id = $1 ORDER BY seq',
    [id],
  );
  return res.rows;
}

/** The capture's reading counter and highest seq as stored. */
export async function storedCounters(pool: pg.Pool, id: number) {
  const res = await pool.query<{ reading_count: number; highest_seq: number }>(
    'SELECT reading_count, highest_seq FROM captures WHERE id = $1',
    [id],
  );
  return res.rows[0];
}
