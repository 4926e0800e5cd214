import type { QueryInterface } from 'sequelize';

/**
 * Min/max tiles kept up to date while a capture records, so a decimated read of an open
 * million-reading capture reads about a thousand tile rows, as a finished one does (issue 15).
 *
 * A statement-level trigger on `readings` sees exactly the rows each INSERT (or COPY) stored —
 * a resend's conflicting rows are not among them — and merges them into every level's tiles in
 * the same transaction: level L, bucket b covers seqs b·64·2^L … (b+1)·64·2^L − 1 and keeps the
 * lowest reading (ties: the smallest seq) and the highest reading (ties: the smallest seq), as
 * buildTiles (server/services/readings.ts) does at finish. The batch is reduced to 64-seq runs
 * first; each level is then formed from those runs, so a batch of n readings costs about
 * n + 21·(n/64 + 1) rows of work. Captures that have no tiles yet get them here.
 */
const LEVELS = 20;

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`
    CREATE FUNCTION driftbench_merge_tiles() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      INSERT INTO reading_tiles AS rt (capture_id, level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value)
      SELECT capture_id, level, bucket, (lo[2])::int, lo[3], lo[1], (-hi[2])::int, hi[3], hi[1]
      FROM (
        SELECT r.capture_id, l.level, r.run >> l.level AS bucket, min(r.lo) AS lo, max(r.hi) AS hi
        FROM (
          SELECT capture_id, seq >> 6 AS run,
                 min(ARRAY[value, seq::float8, t]) AS lo,
                 max(ARRAY[value, -seq::float8, t]) AS hi
          FROM new_rows GROUP BY capture_id, seq >> 6
        ) r CROSS JOIN generate_series(0, ${LEVELS}) AS l(level)
        GROUP BY r.capture_id, l.level, r.run >> l.level
      ) merged
      ON CONFLICT (capture_id, level, bucket) DO UPDATE SET
        min_seq = CASE WHEN (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq) THEN EXCLUDED.min_seq ELSE rt.min_seq END,
        min_t = CASE WHEN (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq) THEN EXCLUDED.min_t ELSE rt.min_t END,
        min_value = LEAST(EXCLUDED.min_value, rt.min_value),
        max_seq = CASE WHEN EXCLUDED.max_value > rt.max_value OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq) THEN EXCLUDED.max_seq ELSE rt.max_seq END,
        max_t = CASE WHEN EXCLUDED.max_value > rt.max_value OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq) THEN EXCLUDED.max_t ELSE rt.max_t END,
        max_value = GREATEST(EXCLUDED.max_value, rt.max_value);
      RETURN NULL;
    END $$`);
  await qi.sequelize.query(`
    CREATE TRIGGER readings_merge_tiles AFTER INSERT ON readings
    REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION driftbench_merge_tiles()`);
  // Captures without tiles (open ones, recorded before this migration): build them from their readings.
  await qi.sequelize.query(`
    INSERT INTO reading_tiles (capture_id, level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value)
    SELECT capture_id, level, bucket, (lo[2])::int, lo[3], lo[1], (-hi[2])::int, hi[3], hi[1]
    FROM (
      SELECT r.capture_id, l.level, r.run >> l.level AS bucket, min(r.lo) AS lo, max(r.hi) AS hi
      FROM (
        SELECT capture_id, seq >> 6 AS run, min(ARRAY[value, seq::float8, t]) AS lo, max(ARRAY[value, -seq::float8, t]) AS hi
        FROM readings
        WHERE capture_id NOT IN (SELECT DISTINCT capture_id FROM reading_tiles)
        GROUP BY capture_id, seq >> 6
      ) r CROSS JOIN generate_series(0, ${LEVELS}) AS l(level)
      GROUP BY r.capture_id, l.level, r.run >> l.level
    ) merged`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query('DROP TRIGGER IF EXISTS readings_merge_tiles ON readings');
  await qi.sequelize.query('DROP FUNCTION IF EXISTS driftbench_merge_tiles()');
  // Tiles of captures still open were made by the trigger: the old code reads tiles of finished captures only.
  await qi.sequelize.query(
    `DELETE FROM reading_tiles WHERE capture_id IN (SELECT id FROM captures WHERE state = 'open')`,
  );
}
