import type { QueryInterface } from 'sequelize';

/**
 * Min/max tiles of finished captures, so a chart of a million readings reads about a thousand
 * rows: level L holds one row per 64·2^L consecutive readings with the lowest and highest reading
 * of that run (time and value), built once when a capture finishes (its readings never change).
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`
    CREATE TABLE reading_tiles (
      capture_id integer NOT NULL REFERENCES captures(id) ON DELETE CASCADE,
      level smallint NOT NULL,
      bucket integer NOT NULL,
      min_seq integer NOT NULL,
      min_t double precision NOT NULL,
      min_value double precision NOT NULL,
      max_seq integer NOT NULL,
      max_t double precision NOT NULL,
      max_value double precision NOT NULL,
      PRIMARY KEY (capture_id, level, bucket)
    )`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.dropTable('reading_tiles');
}
