/**
 * The min/max tile merge rule of `reading_tiles` (issue 15) as the ON CONFLICT clause of an
 * `INSERT INTO reading_tiles AS rt …`: a bucket keeps its lowest reading (by value, ties to the
 * smaller seq) and its highest reading (by value, ties to the smaller seq), the rule of buildTiles
 * at finish (server/services/readings.ts).
 *
 * The WHERE lets a tile be rewritten only when the new minimum lies below it or the new maximum
 * above it: otherwise the SET would leave every column as it was, and skipping it saves a new row
 * version (heap, index, WAL) of every unchanged tile — most tiles above level 1 for a batch.
 *
 * The tile trigger of migration 20261202-0300 carries this same clause (a landed migration keeps
 * the SQL it ran, so it states it again); `tests/api/tileMergeRule.test.ts` checks that the
 * function stored by the migrations still holds it, word for word, so the two cannot drift.
 */
export const TILE_MERGE_ON_CONFLICT = `ON CONFLICT (capture_id, level, bucket) DO UPDATE SET
        min_seq = CASE WHEN (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq) THEN EXCLUDED.min_seq ELSE rt.min_seq END,
        min_t = CASE WHEN (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq) THEN EXCLUDED.min_t ELSE rt.min_t END,
        min_value = LEAST(EXCLUDED.min_value, rt.min_value),
        max_seq = CASE WHEN EXCLUDED.max_value > rt.max_value OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq) THEN EXCLUDED.max_seq ELSE rt.max_seq END,
        max_t = CASE WHEN EXCLUDED.max_value > rt.max_value OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq) THEN EXCLUDED.max_t ELSE rt.max_t END,
        max_value = GREATEST(EXCLUDED.max_value, rt.max_value)
      WHERE (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq)
         OR EXCLUDED.max_value > rt.max_value
         OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq)`;
