import { mkdirSync } from 'node:fs';
import path from 'node:path';
import { pino } from 'pino';
import { loadConfig } from '../server/config.js';
import {
  startCluster,
  portInUse,
  runningPostmaster,
  clusterDataDir,
  type LocalCluster,
} from '../server/db/cluster.js';
import { ensureDatabase } from '../server/db/connection.js';
import { DEMO_PASSWORD, DEMO_USERS, DEMO_DOMAIN } from '../server/db/seed.js';
import { startServer, configuredServerOptions, PROJECT_ROOT } from '../server/index.js';
import { buildClientIfStale } from './build-client.js';

// `npm start`: a local PostgreSQL of the project's own (unless DATABASE_URL is set), migrations,
// the demo lab, the built client, and one server on 127.0.0.1.
const config = loadConfig();
const log = pino({ level: config.logLevel, transport: undefined });
const dataDir = path.resolve(PROJECT_ROOT, config.dataDir);
mkdirSync(dataDir, { recursive: true, mode: 0o755 });

let cluster: LocalCluster | undefined;
let databaseUrl = config.databaseUrl;
if (!databaseUrl) {
  const pgRoot = path.join(dataDir, 'postgres');
  // Our own cluster left running by a crashed server (its postmaster.pid names a live process on
  // this port) is reused; anything else on the port is someone else's.
  const own = runningPostmaster(clusterDataDir(pgRoot));
  if ((await portInUse(config.localPgPort)) && own?.port !== config.localPgPort) {
    console.error(
      `Port ${config.localPgPort} on 127.0.0.1 is in use by another program (not Driftbench's PostgreSQL in ${pgRoot}). ` +
        'Stop whatever listens there, or set PGPORT_LOCAL to another port (or DATABASE_URL to use an existing server).',
    );
    process.exit(1);
  }
  cluster = startCluster(pgRoot, config.localPgPort, (l) => console.log(l));
  await ensureDatabase(cluster.url('postgres'), 'driftbench');
  databaseUrl = cluster.url('driftbench');
}

const stopCluster = () => cluster?.stop();
try {
  // DRIFTBENCH_SKIP_BUILD=1 serves dist/ as it is (the restart test; a machine without the toolchain).
  if (process.env.DRIFTBENCH_SKIP_BUILD !== '1') buildClientIfStale(PROJECT_ROOT);
  // npm start tells the demo's story: finished captures, an approved study and a capture on air.
  const running = await startServer({
    ...configuredServerOptions(config, databaseUrl, log),
    demoStory: config.demo,
  });
  console.log(`\nDriftbench is running at ${running.url}`);
  if (config.demo) {
    console.log(`Demo sign-ins (password "${DEMO_PASSWORD}"):`);
    for (const u of DEMO_USERS) console.log(`  ${u.role.padEnd(11)} ${u.role}@${DEMO_DOMAIN}`);
  }
  console.log('Press Ctrl-C to stop.\n');

  let stopping = false;
  const shutdown = async (signal: string) => {
    if (stopping) return;
    stopping = true;
    console.log(`\n${signal}: stopping the server…`);
    await running.close();
    if (cluster) console.log('Stopping PostgreSQL…');
    stopCluster();
    process.exit(0);
  };
  process.on('SIGINT', () => void shutdown('SIGINT'));
  process.on('SIGTERM', () => void shutdown('SIGTERM'));
} catch (err) {
  console.error((err as Error).message);
  stopCluster();
  process.exit(1);
}
