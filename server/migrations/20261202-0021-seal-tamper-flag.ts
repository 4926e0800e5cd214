import type { QueryInterface } from 'sequelize';

/**
 * A quick integrity flag for lists: when a reading of a sealed capture is updated or deleted, the
 * capture's `seal_broken_at` is set (statement-level triggers with transition tables, so the
 * ingest path, which only inserts into open captures, pays nothing). The authoritative check
 * stays the recomputation of the seal (`GET /api/captures/:id/seal`); this flag lets the captures
 * list and the matrix show the warning without reading every capture's rows.
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q('ALTER TABLE captures ADD COLUMN seal_broken_at timestamptz NULL');
  await q(`CREATE FUNCTION driftbench_mark_seal_broken() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      UPDATE captures SET seal_broken_at = coalesce(seal_broken_at, now())
      WHERE seal_sha256 IS NOT NULL AND id IN (SELECT DISTINCT capture_id FROM changed);
      RETURN NULL;
    END $$`);
  await q(`CREATE TRIGGER readings_sealed_update AFTER UPDATE ON readings
    REFERENCING OLD TABLE AS changed FOR EACH STATEMENT EXECUTE FUNCTION driftbench_mark_seal_broken()`);
  await q(`CREATE TRIGGER readings_sealed_delete AFTER DELETE ON readings
    REFERENCING OLD TABLE AS changed FOR EACH STATEMENT EXECUTE FUNCTION driftbench_mark_seal_broken()`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q('DROP TRIGGER IF EXISTS readings_sealed_update ON readings');
  await q('DROP TRIGGER IF EXISTS readings_sealed_delete ON readings');
  await q('DROP FUNCTION IF EXISTS driftbench_mark_seal_broken()');
  await q('ALTER TABLE captures DROP COLUMN seal_broken_at');
}
