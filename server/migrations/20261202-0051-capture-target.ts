import type { QueryInterface } from 'sequelize';

/**
 * What the bench planned for a capture — a duration in capture seconds or a number of readings —
 * so that someone watching it elsewhere sees its progress and the time left.
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`ALTER TABLE captures ADD COLUMN target jsonb NULL`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`ALTER TABLE captures DROP COLUMN target`);
}
