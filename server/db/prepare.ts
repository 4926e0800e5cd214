import type { Logger } from 'pino';
import { openDatabase, type Database } from './connection.js';
import { migrate } from '../migrations/index.js';
import { initModels } from '../models/index.js';
import { isEmpty, seedDemo } from './seed.js';
import { retireDemoAccounts } from './demoAccounts.js';
import { ensurePartitionsAhead } from '../services/partitions.js';

/** Opens the database at `url`, applies pending migrations, binds the models and seeds the demo lab when asked and empty. */
export async function prepareDatabase(
  url: string,
  opts: { demo: boolean; log?: Logger; poolMax?: number; retireDemo?: boolean },
): Promise<Database> {
  const db = openDatabase(url, { poolMax: opts.poolMax });
  await db.sequelize.authenticate();
  const applied = await migrate(db.sequelize);
  if (applied.length) opts.log?.info({ applied }, 'migrations applied');
  initModels(db.sequelize);
  if (opts.demo && (await isEmpty())) {
    await seedDemo(db.sequelize);
    opts.log?.info('demo lab seeded');
  }
  if (opts.retireDemo && !opts.demo) await retireDemoAccounts(opts.log);
  // The readings partitions of the next capture's block and the one after (migration 20261202-0200).
  await ensurePartitionsAhead(db.sequelize);
  return db;
}
