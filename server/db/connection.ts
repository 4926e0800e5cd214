import { Sequelize } from 'sequelize';
import pg from 'pg';

// BIGINT (int8) as a JS number: Driftbench's ids and sequence numbers stay far below 2^53.
pg.types.setTypeParser(20, (v) => Number(v));
// NUMERIC stays a string in pg; Driftbench stores measurement values as DOUBLE PRECISION instead.

/** The two handles on one database: Sequelize for the model layer, a raw pool for hot paths. */
export interface Database {
  readonly sequelize: Sequelize;
  readonly pool: pg.Pool;
  readonly url: string;
  close(): Promise<void>;
}

/** Opens Sequelize and a pg pool on `url`. */
export function openDatabase(url: string, opts: { poolMax?: number } = {}): Database {
  const sequelize = new Sequelize(url, {
    dialect: 'postgres',
    logging: false,
    pool: { max: opts.poolMax ?? 10, min: 0, idle: 10_000 },
    define: { underscored: true },
  });
  const pool = new pg.Pool({ connectionString: url, max: opts.poolMax ?? 10 });
  pool.on('error', () => {
    // An idle client lost its connection (server restart); the pool replaces it on next use.
  });
  return {
    sequelize,
    pool,
    url,
    async close() {
      await Promise.allSettled([sequelize.close(), pool.end()]);
    },
  };
}

/** Creates database `name` on the server of `adminUrl` if it does not exist (optionally from a template). */
export async function ensureDatabase(
  adminUrl: string,
  name: string,
  template?: string,
): Promise<void> {
  if (!/^[a-z_][a-z0-9_]*$/.test(name)) throw new Error(`unsafe database name: ${name}`);
  const client = new pg.Client({ connectionString: adminUrl });
  await client.connect();
  try {
    const found = await client.query('SELECT 1 FROM pg_database WHERE datname = $1', [name]);
    if (found.rowCount === 0) {
      await client.query(`CREATE DATABASE "${name}"${template ? ` TEMPLATE "${template}"` : ''}`);
    }
  } finally {
    await client.end();
  }
}

/** Drops database `name`, disconnecting anyone still on it. */
export async function dropDatabase(adminUrl: string, name: string): Promise<void> {
  const client = new pg.Client({ connectionString: adminUrl });
  await client.connect();
  try {
    await client.query(`DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`);
  } finally {
    await client.end();
  }
}

/** Replaces the database name in a connection URL. */
export function withDatabase(url: string, name: string): string {
  const u = new URL(url);
  u.pathname = `/${name}`;
  return u.toString();
}
