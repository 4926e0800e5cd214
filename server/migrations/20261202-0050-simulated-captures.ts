import type { QueryInterface } from 'sequelize';

/**
 * Simulated captures are marked as such when they are created (a capture whose link was a
 * simulator), and a study accepts them only when its planner allows it — the demo study does.
 * Captures already stored are marked from the link profile they were recorded with.
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(
    `ALTER TABLE captures ADD COLUMN simulated boolean NOT NULL DEFAULT false`,
  );
  await qi.sequelize.query(
    `UPDATE captures SET simulated = true WHERE link_profile->>'kind' = 'simulator'`,
  );
  await qi.sequelize.query(
    `ALTER TABLE studies ADD COLUMN allow_simulated boolean NOT NULL DEFAULT false`,
  );
  // A study that already holds simulated captures keeps accepting them.
  await qi.sequelize.query(`
    UPDATE studies SET allow_simulated = true
     WHERE id IN (SELECT d.study_id FROM captures c JOIN duts d ON d.id = c.dut_id WHERE c.simulated)`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`ALTER TABLE captures DROP COLUMN simulated`);
  await qi.sequelize.query(`ALTER TABLE studies DROP COLUMN allow_simulated`);
}
