import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn, type ChildProcess } from 'node:child_process';
import { chmodSync, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
import {
  clusterDataDir,
  freePort,
  runningPostmaster,
  startCluster,
} from '../../server/db/cluster.js';
import { PROJECT_ROOT } from '../../server/index.js';

// Issue 10, items 4 and 5: `npm start`'s own PostgreSQL asks every connection for a generated
// password (kept 0600 in the data folder) and listens on loopback; after a kill -9 of the server,
// the next `npm start` finds its cluster by postmaster.pid and comes back by itself; a foreign
// process on the port is an error.
let tmp: string;
let pgPort: number;
let httpPort: number;
const children: ChildProcess[] = [];

beforeAll(async () => {
  tmp = mkdtempSync(path.join(os.tmpdir(), 'driftbench-start-'));
  chmodSync(tmp, 0o755);
  pgPort = await freePort();
  httpPort = await freePort();
});
afterAll(() => {
  for (const c of children) if (c.exitCode === null) c.kill('SIGKILL');
  // Stop the cluster (the test's last start leaves it to us) and remove the folder.
  try {
    startCluster(path.join(tmp, 'postgres'), pgPort, () => {}).stop();
  } catch {
    // already stopped
  }
  rmSync(tmp, { recursive: true, force: true });
});

/** `npm start` (tsx scripts/start.ts) with its data in `tmp`; resolves with its output once it serves. */
function npmStart(
  env: Record<string, string> = {},
): Promise<{ child: ChildProcess; output: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(
      process.execPath,
      ['--import', 'tsx', path.join(PROJECT_ROOT, 'scripts/start.ts')],
      {
        cwd: PROJECT_ROOT,
        env: {
          PATH: process.env.PATH,
          HOME: process.env.HOME,
          NODE_ENV: 'development',
          DRIFTBENCH_DATA: tmp,
          PGPORT_LOCAL: String(pgPort),
          PORT: String(httpPort),
          DRIFTBENCH_SKIP_BUILD: '1',
          DRIFTBENCH_SIMULATORS: '0',
          LOG_LEVEL: 'silent',
          ...env,
        },
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    children.push(child);
    let output = '';
    const onData = (d: Buffer) => {
      output += String(d);
      if (output.includes('Driftbench is running at')) resolve({ child, output });
    };
    child.stdout!.on('data', onData);
    child.stderr!.on('data', onData);
    child.on('exit', (code) => reject(new Error(`npm start exited (${code}):\n${output}`)));
  });
}

const health = async () => (await fetch(`http://127.0.0.1:${httpPort}/api/health`)).status;

describe('npm start and its local PostgreSQL', () => {
  it('starts, and after kill -9 of the server the next start reuses its own cluster', async () => {
    const first = await npmStart();
    expect(await health()).toBe(200);
    first.child.kill('SIGKILL');
    await new Promise((r) => first.child.once('exit', r));
    // The cluster outlived the server.
    const left = runningPostmaster(clusterDataDir(path.join(tmp, 'postgres')));
    expect(left?.port).toBe(pgPort);

    const second = await npmStart();
    expect(second.output).toMatch(/still running .*reusing it/);
    expect(await health()).toBe(200);
    second.child.kill('SIGKILL');
    await new Promise((r) => second.child.once('exit', r));
  }, 180_000);

  it('keeps the generated password in the data folder with mode 0600, and refuses a connection without it', async () => {
    const file = path.join(tmp, 'postgres', 'password');
    expect(statSync(file).mode & 0o777).toBe(0o600);
    const password = readFileSync(file, 'utf8').trim();
    expect(password.length).toBeGreaterThanOrEqual(24);

    const without = new pg.Client({
      host: '127.0.0.1',
      port: pgPort,
      user: 'postgres',
      database: 'postgres',
      password: '',
    });
    await expect(without.connect()).rejects.toThrow();
    const wrong = new pg.Client({
      host: '127.0.0.1',
      port: pgPort,
      user: 'postgres',
      database: 'postgres',
      password: 'not-the-password',
    });
    await expect(wrong.connect()).rejects.toThrow(/password authentication failed/);
    const right = new pg.Client({
      host: '127.0.0.1',
      port: pgPort,
      user: 'postgres',
      database: 'postgres',
      password,
    });
    await right.connect();
    const hba = await right.query(
      "SELECT count(*)::int AS n FROM pg_hba_file_rules WHERE auth_method = 'trust'",
    );
    expect(hba.rows[0].n).toBe(0);
    const listen = await right.query('SHOW listen_addresses');
    expect(listen.rows[0].listen_addresses).toBe('127.0.0.1');
    await right.end();
  });

  it('refuses to start when a foreign process holds the port', async () => {
    const foreignPort = await freePort();
    const squatter = net.createServer().listen(foreignPort, '127.0.0.1');
    await new Promise((r) => squatter.once('listening', r));
    try {
      const other = mkdtempSync(path.join(os.tmpdir(), 'driftbench-start-'));
      chmodSync(other, 0o755);
      await expect(
        npmStart({ PGPORT_LOCAL: String(foreignPort), DRIFTBENCH_DATA: other }),
      ).rejects.toThrow(/in use by another program/);
      rmSync(other, { recursive: true, force: true });
    } finally {
      squatter.close();
    }
  });
});
