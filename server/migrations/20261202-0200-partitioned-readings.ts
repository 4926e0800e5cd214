import type { QueryInterface, Transaction } from 'sequelize';

/**
 * `readings` and `reading_tiles` become tables partitioned by range of capture id (issue 15), in
 * blocks of 1,000 captures: block k holds captures k·1000 … k·1000 + 999 in `readings_p<k>` and
 * `reading_tiles_p<k>` (k zero-padded to six digits), so a block's readings and tiles are archived
 * or dropped together. There is no DEFAULT partition: a block's partitions are made ahead of its
 * first capture (server/services/partitions.ts), and a reading with nowhere to go is an error,
 * never a row parked in a catch-all table.
 *
 * `driftbench_ensure_readings_partition(block)` makes a block's two partitions under an advisory
 * lock, as a plain table attached afterwards: ATTACH PARTITION takes SHARE UPDATE EXCLUSIVE on the
 * parent, so ingest into the other partitions goes on (CREATE TABLE … PARTITION OF would take
 * ACCESS EXCLUSIVE). `reading_archives` records every block taken out (detached or dumped), so
 * the API can say a capture's readings are archived. The existing rows are moved; the CHECK
 * constraints and the triggers (tiles, seal tamper flag) are re-created on the partitioned parents
 * (PostgreSQL allows statement triggers with transition tables there; `new_rows` holds the rows
 * of every partition the statement wrote).
 */
const BLOCK = 1000;
/** One advisory lock key for making and taking out partitions ('DBRP'). */
const PARTITION_LOCK = 0x44425250;

const READINGS_COLUMNS = `
  capture_id integer NOT NULL REFERENCES captures(id) ON DELETE CASCADE,
  seq integer NOT NULL,
  t double precision NOT NULL,
  value double precision NOT NULL,
  flags smallint NOT NULL DEFAULT 0,
  PRIMARY KEY (capture_id, seq)`;

const TILES_COLUMNS = `
  capture_id integer NOT NULL REFERENCES captures(id) ON DELETE CASCADE,
  level smallint NOT NULL,
  bucket integer NOT NULL,
  min_seq integer NOT NULL,
  min_t double precision NOT NULL,
  min_value double precision NOT NULL,
  max_seq integer NOT NULL,
  max_t double precision NOT NULL,
  max_value double precision NOT NULL,
  PRIMARY KEY (capture_id, level, bucket)`;

type Query = (sql: string) => Promise<unknown>;

/**
 * The CHECK constraints and triggers of both tables as SQL that re-creates them on whatever table
 * then bears the name (the reading-flags check of 20261202-0100, the seal-tamper triggers of
 * 20261202-0021, the tile trigger of 20261202-0110, and any added later), read before the rename.
 */
async function extrasOf(q: Query): Promise<string[]> {
  const [checks] = (await q(
    `SELECT format('ALTER TABLE %s ADD CONSTRAINT %I %s', conrelid::regclass, conname, pg_get_constraintdef(oid)) AS sql
     FROM pg_constraint WHERE conrelid IN ('readings'::regclass, 'reading_tiles'::regclass) AND contype = 'c'
     ORDER BY conrelid, conname`,
  )) as [Array<{ sql: string }>, unknown];
  const [triggers] = (await q(
    `SELECT pg_get_triggerdef(oid) AS sql FROM pg_trigger
     WHERE tgrelid IN ('readings'::regclass, 'reading_tiles'::regclass) AND NOT tgisinternal
     ORDER BY tgrelid, tgname`,
  )) as [Array<{ sql: string }>, unknown];
  return [...checks, ...triggers].map((r) => r.sql);
}

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.transaction(async (transaction: Transaction) => {
    const q = (sql: string) => qi.sequelize.query(sql, { transaction });
    await q('LOCK TABLE captures IN SHARE ROW EXCLUSIVE MODE');
    await q('LOCK TABLE readings, reading_tiles IN ACCESS EXCLUSIVE MODE');
    const extras = await extrasOf(q);
    const checks = extras.filter((e) => e.startsWith('ALTER TABLE'));
    const triggers = extras.filter((e) => !e.startsWith('ALTER TABLE'));
    await q('ALTER TABLE readings RENAME TO readings_unpartitioned');
    await q('ALTER INDEX readings_pkey RENAME TO readings_unpartitioned_pkey');
    await q('ALTER TABLE reading_tiles RENAME TO reading_tiles_unpartitioned');
    await q('ALTER INDEX reading_tiles_pkey RENAME TO reading_tiles_unpartitioned_pkey');
    await q(`CREATE TABLE readings (${READINGS_COLUMNS}) PARTITION BY RANGE (capture_id)`);
    await q(`CREATE TABLE reading_tiles (${TILES_COLUMNS}) PARTITION BY RANGE (capture_id)`);
    // CHECK constraints before any partition (a partition takes its parent's when it is made).
    for (const sql of checks) await q(sql);
    await q(`
      CREATE TABLE reading_archives (
        block integer PRIMARY KEY,
        first_capture_id integer NOT NULL,
        last_capture_id integer NOT NULL,
        captures integer NOT NULL,
        readings bigint NOT NULL,
        bytes bigint NOT NULL,
        how varchar(20) NOT NULL CONSTRAINT reading_archives_how_allowed CHECK (how IN ('detached', 'dumped')),
        readings_table text NOT NULL,
        tiles_table text NOT NULL,
        dump_file text,
        archived_at timestamptz NOT NULL DEFAULT now(),
        archived_by text NOT NULL
      )`);
    await q(`CREATE FUNCTION driftbench_readings_block_size() RETURNS integer
      LANGUAGE sql IMMUTABLE AS 'SELECT ${BLOCK}'`);
    await q(`
      CREATE FUNCTION driftbench_ensure_readings_partition(block integer) RETURNS boolean
      LANGUAGE plpgsql AS $$
      DECLARE
        lo integer := block * ${BLOCK};
        hi integer := (block + 1) * ${BLOCK};
        r text := 'readings_p' || lpad(block::text, 6, '0');
        t text := 'reading_tiles_p' || lpad(block::text, 6, '0');
        made boolean := false;
      BEGIN
        IF block < 0 THEN RAISE EXCEPTION 'no partition block %: blocks start at 0', block; END IF;
        IF to_regclass(r) IS NOT NULL AND to_regclass(t) IS NOT NULL THEN RETURN false; END IF;
        -- Two captures opened at once in a new block: the second waits here, then finds the tables.
        PERFORM pg_advisory_xact_lock(${PARTITION_LOCK});
        IF EXISTS (SELECT 1 FROM reading_archives a WHERE a.block = driftbench_ensure_readings_partition.block) THEN
          RAISE EXCEPTION 'readings block % (captures % to %) is archived; attach it back first', block, lo, hi - 1;
        END IF;
        IF to_regclass(r) IS NULL THEN
          EXECUTE format('CREATE TABLE %I (LIKE readings INCLUDING DEFAULTS INCLUDING CONSTRAINTS)', r);
          EXECUTE format('ALTER TABLE readings ATTACH PARTITION %I FOR VALUES FROM (%s) TO (%s)', r, lo, hi);
          made := true;
        END IF;
        IF to_regclass(t) IS NULL THEN
          EXECUTE format('CREATE TABLE %I (LIKE reading_tiles INCLUDING DEFAULTS INCLUDING CONSTRAINTS)', t);
          EXECUTE format('ALTER TABLE reading_tiles ATTACH PARTITION %I FOR VALUES FROM (%s) TO (%s)', t, lo, hi);
          made := true;
        END IF;
        RETURN made;
      END $$`);
    // Every block up to the one after the next capture id to be handed out.
    await q(`
      SELECT driftbench_ensure_readings_partition(b::int)
      FROM generate_series(0, (SELECT GREATEST(
        (SELECT coalesce(max(id), 0) FROM captures),
        (SELECT CASE WHEN is_called THEN last_value ELSE last_value - 1 END FROM captures_id_seq)
      ) + 1) / ${BLOCK} + 1) AS b`);
    await q(
      'INSERT INTO readings (capture_id, seq, t, value, flags) SELECT capture_id, seq, t, value, flags FROM readings_unpartitioned',
    );
    await q(`INSERT INTO reading_tiles SELECT * FROM reading_tiles_unpartitioned`);
    await q('DROP TABLE readings_unpartitioned');
    await q('DROP TABLE reading_tiles_unpartitioned');
    // The triggers last, so moving the rows fired none of them (the tiles were copied as they were).
    for (const sql of triggers) await q(sql);
  });
}

/**
 * Back to one plain table each. Blocks that were detached are brought back into them (their
 * tables still exist); a block that was dumped and dropped cannot be: restore its dump
 * (pg_restore) and attach it (`npm run readings:archive -- attach <block>`) before going down.
 */
export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.transaction(async (transaction: Transaction) => {
    const q = (sql: string) => qi.sequelize.query(sql, { transaction });
    const [dumped] = (await q(
      `SELECT block FROM reading_archives WHERE how = 'dumped' OR to_regclass(readings_table) IS NULL
         OR to_regclass(tiles_table) IS NULL ORDER BY block`,
    )) as [Array<{ block: number }>, unknown];
    if (dumped.length) {
      throw new Error(
        `Readings blocks ${dumped.map((d) => d.block).join(', ')} were dumped and dropped: restore and attach them before undoing the partitioning.`,
      );
    }
    const [archived] = (await q(
      'SELECT readings_table, tiles_table FROM reading_archives ORDER BY block',
    )) as [Array<{ readings_table: string; tiles_table: string }>, unknown];
    await q('LOCK TABLE captures IN SHARE ROW EXCLUSIVE MODE');
    await q('LOCK TABLE readings, reading_tiles IN ACCESS EXCLUSIVE MODE');
    const extras = await extrasOf(q);
    await q('ALTER TABLE readings RENAME TO readings_partitioned');
    await q('ALTER INDEX readings_pkey RENAME TO readings_partitioned_pkey');
    await q('ALTER TABLE reading_tiles RENAME TO reading_tiles_partitioned');
    await q('ALTER INDEX reading_tiles_pkey RENAME TO reading_tiles_partitioned_pkey');
    await q(`CREATE TABLE readings (${READINGS_COLUMNS})`);
    await q(`CREATE TABLE reading_tiles (${TILES_COLUMNS})`);
    for (const sql of extras.filter((e) => e.startsWith('ALTER TABLE'))) await q(sql);
    const sources = [
      ['readings_partitioned', 'reading_tiles_partitioned'],
      ...archived.map((a) => [a.readings_table, a.tiles_table]),
    ];
    for (const [r, t] of sources) {
      await q(
        `INSERT INTO readings (capture_id, seq, t, value, flags) SELECT capture_id, seq, t, value, flags FROM "${r}"`,
      );
      await q(`INSERT INTO reading_tiles SELECT * FROM "${t}"`);
    }
    // Dropping the partitioned parents drops their attached partitions.
    await q('DROP TABLE readings_partitioned, reading_tiles_partitioned');
    for (const a of archived) await q(`DROP TABLE "${a.readings_table}", "${a.tiles_table}"`);
    await q('DROP TABLE reading_archives');
    await q('DROP FUNCTION driftbench_ensure_readings_partition(integer)');
    await q('DROP FUNCTION driftbench_readings_block_size()');
    for (const sql of extras.filter((e) => !e.startsWith('ALTER TABLE'))) await q(sql);
  });
}
