import type { QueryInterface } from 'sequelize';

/**
 * The capture states' CHECK constraint takes the lab's naming convention (migration 0100:
 * `<table>_<column>_allowed`), so a later migration that adds a state finds it by that name.
 * Migration 0150 replaced the list (adding 'stalled') under the name `captures_state_check`.
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`DO $$
    BEGIN
      IF EXISTS (SELECT 1 FROM pg_constraint WHERE conrelid = 'captures'::regclass AND conname = 'captures_state_check')
         AND NOT EXISTS (SELECT 1 FROM pg_constraint WHERE conrelid = 'captures'::regclass AND conname = 'captures_state_allowed') THEN
        ALTER TABLE captures RENAME CONSTRAINT captures_state_check TO captures_state_allowed;
      END IF;
    END $$`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`DO $$
    BEGIN
      IF EXISTS (SELECT 1 FROM pg_constraint WHERE conrelid = 'captures'::regclass AND conname = 'captures_state_allowed')
         AND NOT EXISTS (SELECT 1 FROM pg_constraint WHERE conrelid = 'captures'::regclass AND conname = 'captures_state_check') THEN
        ALTER TABLE captures RENAME CONSTRAINT captures_state_allowed TO captures_state_check;
      END IF;
    END $$`);
}
