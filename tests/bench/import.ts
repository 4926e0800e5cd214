import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, chmodSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { startCluster, destroyCluster, freePort } from '../../server/db/cluster.js';
import { ensureDatabase, openDatabase } from '../../server/db/connection.js';
import { migrate } from '../../server/migrations/index.js';
import { PROJECT_ROOT } from '../../server/index.js';
import { millionRowFile } from '../helpers/importFiles.js';

// The CSV import of issue 12 against a real server process and PostgreSQL: one 1,000,000-row
// file posted as multipart, timed from the first byte sent to the 201 (parse, ingest, finish, seal).
const SECRET = 'driftbench-bench-secret-of-at-least-32-characters';

function startServerProcess(databaseUrl: string, port: number): Promise<ChildProcess> {
  return new Promise((resolve, reject) => {
    const p = spawn(process.execPath, ['--import', 'tsx', path.join(PROJECT_ROOT, 'server/index.ts')], {
      cwd: PROJECT_ROOT,
      env: { ...process.env, DATABASE_URL: databaseUrl, PORT: String(port), JWT_SECRET: SECRET, DRIFTBENCH_DEMO: '1', DRIFTBENCH_SIMULATORS: '0', LOG_LEVEL: 'silent', LOGIN_RATE_LIMIT: '1000' },
      stdio: ['ignore', 'pipe', 'inherit'],
    });
    p.stdout!.on('data', (d) => String(d).includes('listening') && resolve(p));
    p.on('exit', (code) => reject(new Error(`server exited (${code})`)));
  });
}

export async function benchImport(rows = 1_000_000): Promise<void> {
  const tmp = mkdtempSync(path.join(os.tmpdir(), 'driftbench-bench-import-'));
  chmodSync(tmp, 0o755);
  const cluster = startCluster(path.join(tmp, 'pg'), await freePort(), () => {});
  let server: ChildProcess | undefined;
  try {
    await ensureDatabase(cluster.url('postgres'), 'bench');
    const url = cluster.url('bench');
    const db = openDatabase(url);
    await migrate(db.sequelize);
    await db.close();
    const port = await freePort();
    server = await startServerProcess(url, port);
    const base = `http://127.0.0.1:${port}`;
    const login = await fetch(`${base}/api/auth/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: 'technician@kestrelbay.example', password: 'driftbench-demo' }),
    });
    const token = ((await login.json()) as { token: string }).token;
    const headers = { authorization: `Bearer ${token}` };
    const study = (await (await fetch(`${base}/api/studies/1`, { headers })).json()) as { duts: { id: number; unit: string }[]; checkpoints: { id: number }[] };
    const dut = study.duts.find((d) => d.unit === 'Hz')!;
    const text = millionRowFile(rows);
    const form = new FormData();
    form.append('dutId', String(dut.id));
    form.append('checkpointId', String(study.checkpoints[0].id));
    form.append('gateTime', '0.1');
    form.append('file', new Blob([text], { type: 'text/csv' }), 'million.csv');
    const t0 = performance.now();
    const res = await fetch(`${base}/api/captures/import`, { method: 'POST', headers, body: form });
    const body = (await res.json()) as { id: number; readings: number };
    const ms = performance.now() - t0;
    if (res.status !== 201) throw new Error(`import answered ${res.status}: ${JSON.stringify(body)}`);
    console.log(
      `import: ${body.readings.toLocaleString('en')} rows (${(text.length / 1e6).toFixed(1)} MB CSV) → finished, sealed capture in ${(ms / 1000).toFixed(2)} s (${Math.round(body.readings / (ms / 1000)).toLocaleString('en')} rows/s)`,
    );
  } finally {
    server?.kill();
    destroyCluster(cluster);
  }
}
