import path from 'node:path';
import { pino } from 'pino';
import {
  startServer,
  PROJECT_ROOT,
  type RunningServer,
  type ServerOptions,
} from '../../server/index.js';
import { createTestDatabase } from './db.js';
import { TEST_JWT_SECRET } from './app.js';

/**
 * A server with the demo lab (the test secret, no log) over a fresh database of its own, with
 * `options`; `stop` closes it and drops the database.
 */
export async function startDemoServer(
  options: Partial<ServerOptions> = {},
): Promise<{ url: string; server: RunningServer; stop(): Promise<void> }> {
  const { url: databaseUrl, drop } = await createTestDatabase();
  const server = await startServer({
    databaseUrl,
    jwtSecret: TEST_JWT_SECRET,
    demo: true,
    log: pino({ level: 'silent' }),
    ...options,
  });
  return {
    url: server.url,
    server,
    async stop() {
      await server.close();
      await drop();
    },
  };
}

/** A whole Driftbench (API, built client, WebSocket endpoints) on a free port over a fresh seeded database. */
export async function startTestServer(opts: { demoStory?: boolean } = {}) {
  return startDemoServer({
    demoStory: opts.demoStory ?? false,
    port: 0,
    clientDir: path.join(PROJECT_ROOT, 'dist'),
    simulators: true,
    loginRateLimit: 1000,
  });
}
