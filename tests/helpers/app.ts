import { pino } from 'pino';
import request from 'supertest';
import type { Express } from 'express';
import { createApp } from '../../server/app.js';
import { prepareDatabase } from '../../server/db/prepare.js';
import type { Database } from '../../server/db/connection.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import { createTestDatabase } from './db.js';

export const TEST_JWT_SECRET = 'driftbench-test-secret-of-at-least-32-characters';

export interface TestApp {
  app: Express;
  db: Database;
  /** Signs in as the demo user of `role` and returns the bearer token. */
  tokenFor(role: string): Promise<string>;
  close(): Promise<void>;
}

/** The real app on a fresh database of its own, seeded with the demo lab. */
export async function createTestApp(
  opts: {
    loginRateLimit?: number;
    loginAccountLimit?: number;
    trustProxy?: boolean | number | string[];
  } = {},
): Promise<TestApp> {
  const { url, drop } = await createTestDatabase();
  const db = await prepareDatabase(url, { demo: true, poolMax: 5 });
  const app = createApp({
    db,
    jwtSecret: TEST_JWT_SECRET,
    log: pino({ level: 'silent' }),
    loginRateLimit: opts.loginRateLimit ?? 1000,
    loginAccountLimit: opts.loginAccountLimit ?? 1000,
    trustProxy: opts.trustProxy,
  });
  const tokens = new Map<string, string>();
  return {
    app,
    db,
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
      await db.close();
      await drop();
    },
  };
}
