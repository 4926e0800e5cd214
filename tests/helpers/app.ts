import { pino } from 'pino';
import request from 'supertest';
import type { Express } from 'express';
import { createApp, type AppContext } from '../../server/app.js';
import { AnalysisPool } from '../../server/analysis/pool.js';
import { prepareDatabase } from '../../server/db/prepare.js';
import type { Database } from '../../server/db/connection.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import { createTestDatabase } from './db.js';

export const TEST_JWT_SECRET = 'driftbench-test-secret-of-at-least-32-characters';

export interface TestApp {
  app: Express;
  db: Database;
  /** The app's analysis pool, when `createTestApp` was asked for one (closed by `close`). */
  analysis?: AnalysisPool;
  /** Another app on the same database and secret (so the same tokens), with `extra` set. */
  appWith(extra: Partial<AppContext>): Express;
  /** Signs in as the demo user of `role` and returns the bearer token. */
  tokenFor(role: string): Promise<string>;
  close(): Promise<void>;
}

export interface TestAppOptions {
  loginRateLimit?: number;
  loginAccountLimit?: number;
  trustProxy?: boolean | number | string[];
  /**
   * An analysis pool of one worker made for the app, with these options (e.g. `openFreshMs: 0`:
   * every new reading makes the next analysis a fresh computation), as `TestApp.analysis`.
   */
  analysis?: ConstructorParameters<typeof AnalysisPool>[2];
}

/** The real app on a fresh database of its own, seeded with the demo lab. */
export async function createTestApp(opts: TestAppOptions = {}): Promise<TestApp> {
  const { url, drop } = await createTestDatabase();
  const db = await prepareDatabase(url, { demo: true, poolMax: 5 });
  const analysis = opts.analysis ? new AnalysisPool(db.url, 1, opts.analysis) : undefined;
  const appWith = (extra: Partial<AppContext>) =>
    createApp({
      db,
      jwtSecret: TEST_JWT_SECRET,
      log: pino({ level: 'silent' }),
      loginRateLimit: opts.loginRateLimit ?? 1000,
      loginAccountLimit: opts.loginAccountLimit ?? 1000,
      trustProxy: opts.trustProxy,
      analysis,
      ...extra,
    });
  const app = appWith({});
  const tokens = new Map<string, string>();
  return {
    app,
    db,
    analysis,
    appWith,
    async tokenFor(role) {
      const cached = tokens.get(role);
      if (cached) return cached;
      const res = await request(app)
        .post('/api/auth/login')
        .send({ email: `${role}@${DEMO_DOMAIN}`, password: DEMO_PASSWORD });
      if (res.status !== 200)
        throw new Error(`login as ${role} failed: ${res.status} ${JSON.stringify(res.body)}`);
      tokens.set(role, res.body.token);
      return res.body.token as string;
    },
    async close() {
      await analysis?.close();
      await db.close();
      await drop();
    },
  };
}
