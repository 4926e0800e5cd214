import { Umzug, SequelizeStorage } from 'umzug';
import type { Sequelize, QueryInterface } from 'sequelize';
import * as m0001 from './20261201-0001-initial.js';
import * as m0002 from './20261201-0002-reading-tiles.js';
import * as m0101 from './20261202-0001-uncertainty-inputs.js';
import * as m0010 from './20261202-0010-account-security.js';
import * as m0020 from './20261202-0020-review-and-record.js';
import * as m0021 from './20261202-0021-seal-tamper-flag.js';
import * as m0050 from './20261202-0050-simulated-captures.js';
import * as m0051 from './20261202-0051-capture-target.js';
import * as m0100 from './20261202-0100-check-constraints.js';
import * as m0110 from './20261202-0110-live-reading-tiles.js';
import * as m0120 from './20261202-0120-calibration-records.js';
import * as m0130 from './20261202-0130-dut-quantities-and-tilt-checks.js';
import * as m0140 from './20261202-0140-process-kinds-and-editing.js';
import * as m0150 from './20261202-0150-capture-abort-stall.js';
import * as m0151 from './20261202-0151-capture-state-constraint-name.js';
import * as m0200 from './20261202-0200-partitioned-readings.js';
import * as m0230 from './20261202-0230-tiles-by-ingest.js';
import * as m0300 from './20261202-0300-tiles-skip-unchanged.js';

type Step = {
  up(p: { context: QueryInterface }): Promise<void>;
  down(p: { context: QueryInterface }): Promise<void>;
};

/** Every migration in order. A migration that has landed is never edited: add a new one. */
const MIGRATIONS: Array<[string, Step]> = [
  ['20261201-0001-initial', m0001],
  ['20261201-0002-reading-tiles', m0002],
  ['20261202-0001-uncertainty-inputs', m0101],
  ['20261202-0010-account-security', m0010],
  ['20261202-0020-review-and-record', m0020],
  ['20261202-0021-seal-tamper-flag', m0021],
  ['20261202-0050-simulated-captures', m0050],
  ['20261202-0051-capture-target', m0051],
  ['20261202-0100-check-constraints', m0100],
  ['20261202-0110-live-reading-tiles', m0110],
  ['20261202-0120-calibration-records', m0120],
  ['20261202-0130-dut-quantities-and-tilt-checks', m0130],
  ['20261202-0140-process-kinds-and-editing', m0140],
  ['20261202-0150-capture-abort-stall', m0150],
  ['20261202-0151-capture-state-constraint-name', m0151],
  ['20261202-0200-partitioned-readings', m0200],
  ['20261202-0230-tiles-by-ingest', m0230],
  ['20261202-0300-tiles-skip-unchanged', m0300],
];

/** Builds the migrator for a Sequelize connection (state kept in the `sequelize_meta` table). */
export function migrator(sequelize: Sequelize) {
  return new Umzug<QueryInterface>({
    migrations: MIGRATIONS.map(([name, step]) => ({
      name,
      up: ({ context }: { context: QueryInterface }) => step.up({ context }),
      down: ({ context }: { context: QueryInterface }) => step.down({ context }),
    })),
    context: sequelize.getQueryInterface(),
    storage: new SequelizeStorage({ sequelize, tableName: 'sequelize_meta' }),
    logger: undefined,
  });
}

/** Applies every pending migration; returns the names applied. */
export async function migrate(sequelize: Sequelize): Promise<string[]> {
  const done = await migrator(sequelize).up();
  return done.map((m) => m.name);
}
