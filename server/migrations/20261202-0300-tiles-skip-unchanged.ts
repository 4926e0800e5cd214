import type { QueryInterface } from 'sequelize';

/**
 * The tile trigger writes a tile only when the batch changes it (issue 15, live path).
 *
 * Every statement that adds readings merges them into all 21 tile levels (migration
 * 20261202-0110, redefined by 0230). For a live capture each short batch lands in the same few
 * tiles, and above the lowest levels the batch seldom holds a new lowest or highest reading —
 * yet ON CONFLICT DO UPDATE wrote a new version of every tile it touched (heap, index, WAL), about
 * twenty writes per capture per batch. The update now carries the merge's own condition as its
 * WHERE: a tile is rewritten only when the batch's minimum lies below it (by value, then the
 * smaller seq) or its maximum above it (by value, then the smaller seq). When neither holds, the
 * SET would have left every column as it was, so the tiles are the same as before, reading for
 * reading (`tests/api/liveTiles.test.ts`, `tests/api/ingestGroup.test.ts` compare them with the
 * ones finish rebuilds). Everything else is as in migration 0230.
 */
const LEVELS = 20;

function mergeFunction(onlyWhenChanged: boolean): string {
  return `
    CREATE OR REPLACE FUNCTION driftbench_merge_tiles() RETURNS trigger LANGUAGE plpgsql AS $$
    DECLARE missing integer;
    BEGIN
      IF current_setting('driftbench.tiles', true) = 'caller' THEN RETURN NULL; END IF;
      -- The foreign key, once per statement: lock the captures named (so none goes before commit),
      -- then every one must exist.
      PERFORM 1 FROM captures c WHERE c.id IN (SELECT DISTINCT capture_id FROM new_rows) FOR KEY SHARE OF c;
      SELECT count(*) INTO missing FROM (SELECT DISTINCT capture_id FROM new_rows) n
      WHERE NOT EXISTS (SELECT 1 FROM captures c WHERE c.id = n.capture_id);
      IF missing > 0 THEN
        RAISE EXCEPTION 'readings name % capture(s) that do not exist', missing
          USING ERRCODE = 'foreign_key_violation';
      END IF;
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
        max_value = GREATEST(EXCLUDED.max_value, rt.max_value)${
          onlyWhenChanged
            ? `
      WHERE (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq)
         OR EXCLUDED.max_value > rt.max_value
         OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq)`
            : ''
        };
      RETURN NULL;
    END $$`;
}

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(mergeFunction(true));
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(mergeFunction(false));
}
