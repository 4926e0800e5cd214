import { randomBytes } from 'node:crypto';
import { ensureDatabase, dropDatabase, withDatabase } from '../../server/db/connection.js';

/** A database of the test file's own, copied from the migrated template that `npm test` prepared. */
export async function createTestDatabase(): Promise<{ url: string; drop(): Promise<void> }> {
  const admin = process.env.DRIFTBENCH_TEST_PG;
  const template = process.env.DRIFTBENCH_TEST_TEMPLATE;
  if (!admin || !template) {
    throw new Error(
      'API tests need the throwaway PostgreSQL that `npm test` starts (DRIFTBENCH_TEST_PG is not set).',
    );
  }
  const name = `t_${randomBytes(6).toString('hex')}`;
  await ensureDatabase(admin, name, template);
  return { url: withDatabase(admin, name), drop: () => dropDatabase(admin, name) };
}
