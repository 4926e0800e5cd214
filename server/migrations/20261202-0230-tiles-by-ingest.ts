import type { QueryInterface } from 'sequelize';

/**
 * One stream's ingest near COPY speed (issue 15). Two costs that grew with every row go:
 *
 * 1. The tile trigger of migration 20261202-0110 steps aside for a statement whose transaction
 *    set `driftbench.tiles` to `caller`: the ingest's COPY path (server/services/ingest.ts)
 *    computes the batch's tiles in Node from the columns it already holds and merges them in its
 *    own statement. Every other INSERT or COPY into `readings` is merged by the trigger as before.
 *    (Merging a batch twice would still be exact — a min/max merge is idempotent.)
 *
 * 2. The foreign key readings.capture_id → captures.id is checked by PostgreSQL once per row (a
 *    locking look-up of the capture for each of a batch's 5,000 rows, about a third of a COPY's
 *    time here). It is replaced by checks per statement that keep the same guarantees:
 *    - every statement that adds readings either holds the capture's row lock (the ingest paths
 *      lock it FOR NO KEY UPDATE before inserting) or is checked by the tile trigger, which
 *      takes FOR KEY SHARE on the captures its rows name and refuses the statement (23503, as the
 *      foreign key did) if one is missing — so no reading can name a capture that does not exist;
 *    - deleting captures deletes their readings (what ON DELETE CASCADE did), by a statement
 *      trigger on captures; a delete waits for an ingest holding the row lock, so readings
 *      committed just before are deleted too.
 *    `tests/api/ingestCopy.test.ts` checks both.
 */
const LEVELS = 20;

function mergeFunction(perStatementKey: boolean): string {
  return `
    CREATE OR REPLACE FUNCTION driftbench_merge_tiles() RETURNS trigger LANGUAGE plpgsql AS $$
    ${perStatementKey ? 'DECLARE missing integer;' : ''}
    BEGIN
      ${
        perStatementKey
          ? `IF current_setting('driftbench.tiles', true) = 'caller' THEN RETURN NULL; END IF;
      -- The foreign key, once per statement: lock the captures named (so none goes before commit),
      -- then every one must exist.
      PERFORM 1 FROM captures c WHERE c.id IN (SELECT DISTINCT capture_id FROM new_rows) FOR KEY SHARE OF c;
      SELECT count(*) INTO missing FROM (SELECT DISTINCT capture_id FROM new_rows) n
      WHERE NOT EXISTS (SELECT 1 FROM captures c WHERE c.id = n.capture_id);
      IF missing > 0 THEN
        RAISE EXCEPTION 'readings name % capture(s) that do not exist', missing
          USING ERRCODE = 'foreign_key_violation';
      END IF;`
          : ''
      }
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
    END $$`;
}

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.transaction(async (transaction) => {
    const q = (sql: string) => qi.sequelize.query(sql, { transaction });
    await q(mergeFunction(true));
    // The foreign key by whatever name it has (the partitioned table of migration 0200 re-made it).
    await q(`
      DO $$
      DECLARE k text;
      BEGIN
        FOR k IN SELECT conname FROM pg_constraint
                 WHERE conrelid = 'readings'::regclass AND contype = 'f' AND confrelid = 'captures'::regclass
        LOOP
          EXECUTE format('ALTER TABLE readings DROP CONSTRAINT %I', k);
        END LOOP;
      END $$`);
    await q(`
      CREATE FUNCTION driftbench_delete_capture_readings() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN
        DELETE FROM readings WHERE capture_id IN (SELECT id FROM gone);
        RETURN NULL;
      END $$`);
    await q(`
      CREATE TRIGGER captures_delete_readings AFTER DELETE ON captures
      REFERENCING OLD TABLE AS gone FOR EACH STATEMENT EXECUTE FUNCTION driftbench_delete_capture_readings()`);
  });
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.transaction(async (transaction) => {
    const q = (sql: string) => qi.sequelize.query(sql, { transaction });
    await q('DROP TRIGGER IF EXISTS captures_delete_readings ON captures');
    await q('DROP FUNCTION IF EXISTS driftbench_delete_capture_readings()');
    await q(
      'ALTER TABLE readings ADD FOREIGN KEY (capture_id) REFERENCES captures(id) ON DELETE CASCADE',
    );
    await q(mergeFunction(false));
  });
}
