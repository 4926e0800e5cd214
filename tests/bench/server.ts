import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, chmodSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import {
  startCluster,
  destroyCluster,
  freePort,
  type LocalCluster,
} from '../../server/db/cluster.js';
import { ensureDatabase, openDatabase } from '../../server/db/connection.js';
import { migrate } from '../../server/migrations/index.js';
import { PROJECT_ROOT } from '../../server/index.js';

/**
 * One benchmark's world: a throwaway PostgreSQL cluster, a migrated `bench` database and the
 * server in a process of its own (as `npm start` runs it), signed in as the demo accounts.
 * Every bench that drives the HTTP API starts here, so they all measure the same set-up.
 *
 * `BENCH_LOG=info` shows the server's log on stderr (errors are always shown);
 * `BENCH_CPU_PROF=<folder>` writes V8 CPU profiles of the server's threads there when it stops;
 * `env.BENCH_LOOP_FILE` makes the server append its event-loop delay once a second
 * (tests/bench/loopProbe.mjs).
 */
export interface BenchServer {
  cluster: LocalCluster;
  /** The bench database's connection URL. */
  url: string;
  /** `http://127.0.0.1:<port>` */
  base: string;
  /** A bearer token of the demo account with this role (signed in once, then remembered). */
  token(role: 'technician' | 'viewer' | 'lead' | 'admin'): Promise<string>;
  /** JSON headers with the role's token. */
  headers(role: 'technician' | 'viewer' | 'lead' | 'admin'): Promise<Record<string, string>>;
  /** The demo study's first DUT and checkpoint (or the first DUT measured in `unit`). */
  studyTarget(unit?: string): Promise<{ dutId: number; checkpointId: number }>;
  /** Opens a capture through the API as the technician. */
  newCapture(opts?: { gateTime?: number; unit?: string }): Promise<number>;
  stop(): Promise<void>;
}

const SECRET = 'driftbench-bench-secret-of-at-least-32-characters';

function startServerProcess(
  databaseUrl: string,
  port: number,
  env: Record<string, string>,
): Promise<ChildProcess> {
  const log = process.env.BENCH_LOG;
  const prof = process.env.BENCH_CPU_PROF;
  const probe = env.BENCH_LOOP_FILE
    ? ['--import', path.join(PROJECT_ROOT, 'tests/bench/loopProbe.mjs')]
    : [];
  const args = [
    ...(prof ? ['--cpu-prof', `--cpu-prof-dir=${prof}`] : []),
    ...probe,
    '--import',
    'tsx',
    path.join(PROJECT_ROOT, 'server/index.ts'),
  ];
  return new Promise((resolve, reject) => {
    const p = spawn(process.execPath, args, {
      cwd: PROJECT_ROOT,
      env: {
        ...process.env,
        DATABASE_URL: databaseUrl,
        PORT: String(port),
        JWT_SECRET: SECRET,
        DRIFTBENCH_DEMO: '1',
        DRIFTBENCH_SIMULATORS: '0',
        LOG_LEVEL: log ?? 'error',
        LOGIN_RATE_LIMIT: '1000',
        NODE_ENV: 'development',
        ...env,
      },
      stdio: ['ignore', 'pipe', 'inherit'],
    });
    p.stdout!.on('data', (d) => {
      // Without BENCH_LOG the server logs errors only: show them, they explain a failed figure.
      if (log || /"level":[56]0/.test(String(d))) process.stderr.write(d);
      if (/^listening http/m.test(String(d))) resolve(p);
    });
    p.on('exit', (code, signal) => reject(new Error(`server exited (${code ?? signal})`)));
  });
}

export async function startBenchServer(
  opts: { env?: Record<string, string> } = {},
): Promise<BenchServer> {
  const tmp = mkdtempSync(path.join(os.tmpdir(), 'driftbench-bench-'));
  chmodSync(tmp, 0o755);
  const cluster = startCluster(path.join(tmp, 'pg'), await freePort(), () => {});
  const url = cluster.url('bench');
  let server: ChildProcess | undefined;
  let port: number;
  try {
    await ensureDatabase(cluster.url('postgres'), 'bench');
    const db = openDatabase(url);
    await migrate(db.sequelize);
    await db.close();
    port = await freePort();
    server = await startServerProcess(url, port, opts.env ?? {});
  } catch (err) {
    server?.kill('SIGTERM');
    destroyCluster(cluster);
    throw err;
  }
  const base = `http://127.0.0.1:${port}`;
  const tokens = new Map<string, Promise<string>>();
  const token = (role: string) => {
    let t = tokens.get(role);
    if (!t) {
      t = (async () => {
        const res = await fetch(`${base}/api/auth/login`, {
          method: 'POST',
          headers: { 'content-type': 'application/json' },
          body: JSON.stringify({
            email: `${role}@kestrelbay.example`,
            password: 'driftbench-demo',
          }),
        });
        if (!res.ok)
          throw new Error(`sign-in as ${role} answered ${res.status}: ${await res.text()}`);
        return ((await res.json()) as { token: string }).token;
      })();
      tokens.set(role, t);
    }
    return t;
  };
  const headers = async (role: string) => ({
    'content-type': 'application/json',
    authorization: `Bearer ${await token(role)}`,
  });
  const studyTarget = async (unit?: string) => {
    const res = await fetch(`${base}/api/studies/1`, { headers: await headers('technician') });
    if (!res.ok) throw new Error(`GET /api/studies/1 answered ${res.status}: ${await res.text()}`);
    const study = (await res.json()) as {
      duts: { id: number; unit: string }[];
      checkpoints: { id: number }[];
    };
    const dut = unit ? study.duts.find((d) => d.unit === unit) : study.duts[0];
    if (!dut) throw new Error(`the demo study has no DUT measured in ${unit}`);
    return { dutId: dut.id, checkpointId: study.checkpoints[0].id };
  };
  const newCapture = async (o: { gateTime?: number; unit?: string } = {}) => {
    const target = await studyTarget(o.unit);
    const res = await fetch(`${base}/api/captures`, {
      method: 'POST',
      headers: await headers('technician'),
      body: JSON.stringify({
        ...target,
        quantity: 'frequency',
        unit: o.unit ?? 'Hz',
        gateTime: o.gateTime ?? 0.01,
      }),
    });
    if (res.status !== 201)
      throw new Error(`POST /api/captures answered ${res.status}: ${await res.text()}`);
    return ((await res.json()) as { id: number }).id;
  };
  const proc = server;
  return {
    cluster,
    url,
    base,
    token,
    headers,
    studyTarget,
    newCapture,
    async stop() {
      if (proc.exitCode === null && proc.signalCode === null) {
        const exited = new Promise((r) => proc.once('exit', r));
        proc.kill('SIGTERM');
        await Promise.race([exited, new Promise((r) => setTimeout(r, 10_000))]);
      }
      destroyCluster(cluster);
    },
  };
}

/**
 * fetch that sends a request again when the connection closed under it: a keep-alive socket the
 * server closed after its 5 s idle timeout just as the client reused it (seen here when the load
 * generator's own loop was busy preparing bodies). Only for idempotent requests — a readings
 * batch is one (the server keeps each seq once), a finish is one.
 */
export async function benchFetch(url: string, init: RequestInit, attempts = 3): Promise<Response> {
  for (let i = 1; ; i++) {
    try {
      return await fetch(url, init);
    } catch (err) {
      const code = (err as { cause?: { code?: string } }).cause?.code;
      if (i >= attempts || !(code === 'UND_ERR_SOCKET' || code === 'ECONNRESET')) throw err;
    }
  }
}
