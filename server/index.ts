import http from 'node:http';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { pino, type Logger } from 'pino';
import { createApp } from './app.js';
import { prepareDatabase } from './db/prepare.js';
import { openDatabase, type Database } from './db/connection.js';
import { routeUpgrades, type UpgradeHandler } from './ws/upgrade.js';
import { createLiveHub } from './ws/live.js';
import { requireSession } from './ws/sessionGate.js';
import { AnalysisPool } from './analysis/pool.js';
import { resolveJwtSecret } from './services/auth.js';
import type { Config } from './config.js';
import { FolderStore } from './services/storage.js';
import type { UploadPolicy } from './services/attachments.js';
import { startMailWorker, transportFor, type MailWorker } from './services/mail.js';
import { startLocalMail, type LocalMailService } from './services/localMail.js';
import { startSchedules } from './services/schedules.js';
import { findOnAir, seedDemoStory, startDemoFeeder } from './db/demoStory.js';

export const PROJECT_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

export interface ServerOptions {
  databaseUrl: string;
  /** A read replica of the database (DATABASE_REPLICA_URL): analyses and replay reads go there. */
  replicaUrl?: string;
  jwtSecret: string;
  host?: string;
  port?: number;
  demo?: boolean;
  /** With demo: seed the demo's captures and approved study once, and feed its on-air capture live. */
  demoStory?: boolean;
  /** Deactivate demo accounts that still have the demo password (production without DRIFTBENCH_DEMO=1). */
  retireDemo?: boolean;
  clientDir?: string;
  simulators?: boolean;
  loginRateLimit?: number;
  loginAccountLimit?: number;
  trustProxy?: boolean | number | string[];
  log?: Logger;
  /** Folder for attachments (`<data>/attachments`); a temporary folder when absent. */
  dataDir?: string;
  uploadPolicy?: UploadPolicy;
  /** A real SMTP server; without it the local mail service runs on 127.0.0.1. */
  smtpUrl?: string;
  localSmtpPort?: number;
  /** Run the mail worker and the e-mail schedules (default true). */
  mail?: boolean;
  /** Start the analysis pool's finish worker a few seconds after listening (AnalysisPool.warmFinish). */
  warmFinishWorker?: boolean;
}

export interface RunningServer {
  url: string;
  port: number;
  db: Database;
  hub: ReturnType<typeof createLiveHub>;
  server: http.Server;
  /** The delivery worker (tests call `deliverDue()` on it); absent when mail is off. */
  mailWorker?: MailWorker;
  /** smtp:// URL of the local mail service, when it runs. */
  localMailUrl?: string;
  close(): Promise<void>;
}

/** Prepares the database, builds the app and WebSocket endpoints, and listens. */
export async function startServer(opts: ServerOptions): Promise<RunningServer> {
  const log = opts.log ?? pino({ level: 'info' });
  const db = await prepareDatabase(opts.databaseUrl, {
    demo: opts.demo ?? false,
    log,
    retireDemo: opts.retireDemo,
  });
  const hub = createLiveHub(opts.jwtSecret, db.pool, { log });
  let stopFeeder: (() => void) | undefined;
  if (opts.demo && opts.demoStory) {
    const onAir = (await seedDemoStory(db.pool, hub, log)) ?? (await findOnAir());
    if (onAir) stopFeeder = startDemoFeeder(db.pool, hub, onAir, log);
  }
  // With a replica, the analysis workers read there (each answer says which reading count it
  // covers), and so do raw pages of finished captures; everything else stays on the primary.
  const analysis = new AnalysisPool(opts.replicaUrl ?? opts.databaseUrl, undefined, {
    primaryUrl: opts.databaseUrl,
  });
  const replica = opts.replicaUrl ? openDatabase(opts.replicaUrl, { poolMax: 4 }) : undefined;
  const app = createApp({
    replica: replica?.pool,
    db,
    jwtSecret: opts.jwtSecret,
    log,
    clientDir: opts.clientDir,
    loginRateLimit: opts.loginRateLimit,
    loginAccountLimit: opts.loginAccountLimit,
    trustProxy: opts.trustProxy,
    hub,
    analysis,
    attachmentStore: opts.dataDir
      ? new FolderStore(path.join(opts.dataDir, 'attachments'))
      : undefined,
    uploadPolicy: opts.uploadPolicy,
  });
  const server = http.createServer(app);

  // E-mail: the local mail service unless a real server is configured, the delivery worker, the schedules.
  let localMail: LocalMailService | undefined;
  let mailWorker: MailWorker | undefined;
  let schedules: { stop(): void } | undefined;
  if (opts.mail ?? true) {
    let smtpUrl = opts.smtpUrl;
    if (!smtpUrl) {
      localMail = await startLocalMail(db.pool, { port: opts.localSmtpPort, log });
      smtpUrl = localMail.url;
      log.info({ url: localMail.url }, 'local mail service listening');
    }
    mailWorker = startMailWorker({ transport: transportFor(smtpUrl), log });
    schedules = startSchedules({ log, hub });
  }

  const upgrades: UpgradeHandler[] = [hub];
  if (opts.simulators ?? true) {
    const { createSimulatorHub, SIM_PATHS } = await import('../simulators/server.js');
    // The simulators open only for a signed-in session, like /ws.
    upgrades.push(requireSession(createSimulatorHub(), SIM_PATHS, opts.jwtSecret, db.pool));
  }
  server.on('upgrade', routeUpgrades(upgrades));

  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(opts.port ?? 0, opts.host ?? '127.0.0.1', () => resolve());
  });
  if (opts.warmFinishWorker) setTimeout(() => analysis.warmFinish(), 3000).unref();
  const addr = server.address();
  const port = typeof addr === 'object' && addr ? addr.port : 0;
  const host = opts.host ?? '127.0.0.1';
  let closed = false;
  return {
    url: `http://${host}:${port}`,
    port,
    db,
    hub,
    server,
    mailWorker,
    localMailUrl: localMail?.url,
    async close() {
      if (closed) return;
      closed = true;
      stopFeeder?.();
      schedules?.stop();
      await mailWorker?.stop();
      await localMail?.close();
      await Promise.allSettled([...upgrades.map((u) => u.close()), analysis.close()]);
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
      await db.close();
      await replica?.close();
    },
  };
}

/**
 * The options both entries (`npm start` and running this file) take from the configuration: the
 * JWT secret from the environment or the data directory, and the built client under dist/.
 */
export function configuredServerOptions(
  config: Config,
  databaseUrl: string,
  log: Logger,
): ServerOptions {
  return {
    databaseUrl,
    replicaUrl: config.databaseReplicaUrl,
    jwtSecret: resolveJwtSecret(config.jwtSecret, path.resolve(PROJECT_ROOT, config.dataDir)),
    host: config.host,
    port: config.port,
    demo: config.demo,
    retireDemo: config.env === 'production' && !config.demo,
    clientDir: path.join(PROJECT_ROOT, 'dist'),
    dataDir: path.resolve(PROJECT_ROOT, config.dataDir),
    uploadPolicy: { maxBytes: config.uploadMaxBytes, types: config.uploadTypes },
    smtpUrl: config.smtpUrl,
    localSmtpPort: config.localSmtpPort,
    simulators: config.simulators,
    loginRateLimit: config.loginRateLimit,
    loginAccountLimit: config.loginAccountLimit,
    trustProxy: config.trustProxy,
    warmFinishWorker: true,
    log,
  };
}

/**
 * Run directly (`tsx server/index.ts`) against DATABASE_URL, without the local cluster or a client
 * build: the entry used by fault tests and benchmarks. `npm start` is the full entry.
 */
async function main(): Promise<void> {
  const { loadConfig } = await import('./config.js');
  const config = loadConfig();
  if (!config.databaseUrl)
    throw new Error(
      'DATABASE_URL is required when running server/index.ts directly; use `npm start` otherwise.',
    );
  const running = await startServer(
    configuredServerOptions(config, config.databaseUrl, pino({ level: config.logLevel })),
  );
  console.log(`listening ${running.url}`);
  const stop = () => void running.close().then(() => process.exit(0));
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  main().catch((err) => {
    console.error(err instanceof Error ? err.message : err);
    process.exit(1);
  });
}
