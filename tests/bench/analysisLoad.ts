import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, chmodSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
import { startCluster, destroyCluster, freePort } from '../../server/db/cluster.js';
import { ensureDatabase, openDatabase } from '../../server/db/connection.js';
import { migrate } from '../../server/migrations/index.js';
import { PROJECT_ROOT } from '../../server/index.js';

// Issue 10, item 2: a technician's ingest latency while four viewers request the analysis of a
// 1,000,000-reading open capture in a loop. Target: ingest p95 under 50 ms. The server runs in
// its own process (as `npm start` does); the load generator runs here.
const SECRET = 'driftbench-bench-secret-of-at-least-32-characters';
const TARGET_P95_MS = 50;
const pct = (xs: number[], p: number) => [...xs].sort((a, b) => a - b)[Math.min(xs.length - 1, Math.floor(xs.length * p))] ?? NaN;

function startServerProcess(databaseUrl: string, port: number): Promise<ChildProcess> {
  return new Promise((resolve, reject) => {
    const p = spawn(process.execPath, ['--import', 'tsx', path.join(PROJECT_ROOT, 'server/index.ts')], {
      cwd: PROJECT_ROOT,
      env: { ...process.env, DATABASE_URL: databaseUrl, PORT: String(port), JWT_SECRET: SECRET, DRIFTBENCH_DEMO: '1', DRIFTBENCH_SIMULATORS: '0', LOG_LEVEL: 'silent', NODE_ENV: 'development' },
      stdio: ['ignore', 'pipe', 'inherit'],
    });
    p.stdout!.on('data', (d) => String(d).includes('listening') && resolve(p));
    p.on('exit', (code) => reject(new Error(`server exited (${code})`)));
  });
}

export async function benchAnalysisLoad(opts: { baselineS?: number; loadS?: number } = {}): Promise<void> {
  const baselineS = opts.baselineS ?? 10;
  const loadS = opts.loadS ?? 40;
  const tmp = mkdtempSync(path.join(os.tmpdir(), 'driftbench-bench-'));
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
    const login = async (role: string) =>
      ((await (await fetch(`${base}/api/auth/login`, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify({ email: `${role}@kestrelbay.example`, password: 'driftbench-demo' }),
      })).json()) as { token: string }).token;
    const tech = { 'content-type': 'application/json', authorization: `Bearer ${await login('technician')}` };
    const viewer = { authorization: `Bearer ${await login('viewer')}` };
    const study = (await (await fetch(`${base}/api/studies/1`, { headers: tech })).json()) as { duts: { id: number }[]; checkpoints: { id: number }[] };
    const created = await fetch(`${base}/api/captures`, {
      method: 'POST',
      headers: tech,
      body: JSON.stringify({ dutId: study.duts[0].id, checkpointId: study.checkpoints[0].id, quantity: 'frequency', unit: 'Hz', gateTime: 0.01 }),
    });
    const id = ((await created.json()) as { id: number }).id;

    // The open capture: 1,000,000 readings written straight into the table.
    const N = 1_000_000;
    const pool = new pg.Pool({ connectionString: url, max: 2 });
    await pool.query(
      `INSERT INTO readings (capture_id, seq, t, value) SELECT $1, g, g * 0.01, 16e6 + sin(g / 1000.0) * 1e-3 + random() * 1e-5 FROM generate_series(0, ${N - 1}) g`,
      [id],
    );
    await pool.query(`UPDATE captures SET reading_count = ${N}, highest_seq = ${N - 1} WHERE id = $1`, [id]);
    await pool.query('VACUUM ANALYZE readings');
    await pool.end();

    // The technician: 10 readings every 100 ms into the same capture, as the bench uploader sends them.
    let seq = N;
    const ingestFor = async (seconds: number) => {
      const latencies: number[] = [];
      const until = performance.now() + seconds * 1000;
      while (performance.now() < until) {
        const readings = Array.from({ length: 10 }, () => ({ seq, t: seq * 0.01, value: 16e6 + Math.random() * 1e-5, _: seq++ })).map(({ _, ...r }) => r);
        const t0 = performance.now();
        const res = await fetch(`${base}/api/captures/${id}/readings`, { method: 'POST', headers: tech, body: JSON.stringify({ readings }) });
        await res.arrayBuffer();
        if (!res.ok) throw new Error(`ingest failed: ${res.status}`);
        const ms = performance.now() - t0;
        latencies.push(ms);
        await new Promise((r) => setTimeout(r, Math.max(0, 100 - ms)));
      }
      return latencies;
    };

    const baseline = await ingestFor(baselineS);

    // Four viewers asking for the analysis in a loop while the technician keeps ingesting.
    let stop = false;
    const analysisMs: number[] = [];
    const viewers = Array.from({ length: 4 }, async () => {
      while (!stop) {
        const t0 = performance.now();
        const res = await fetch(`${base}/api/captures/${id}/analysis`, { headers: viewer });
        const body = (await res.json()) as { counts?: { total: number } };
        if (!res.ok) throw new Error(`analysis failed: ${res.status} ${JSON.stringify(body)}`);
        analysisMs.push(performance.now() - t0);
      }
    });
    const loaded = await ingestFor(loadS);
    stop = true;
    await Promise.all(viewers);

    const line = (label: string, xs: number[]) =>
      `  ${label.padEnd(44)} n=${String(xs.length).padStart(4)}  p50 ${pct(xs, 0.5).toFixed(1).padStart(7)} ms  p95 ${pct(xs, 0.95).toFixed(1).padStart(7)} ms  max ${Math.max(...xs).toFixed(1).padStart(7)} ms`;
    console.log('\nIngest while four viewers analyse a 1,000,000-reading open capture (issue 10, item 2)');
    console.log(line('ingest, no viewers', baseline));
    console.log(line('ingest, 4 viewers looping on analysis', loaded));
    console.log(line('analysis answers (4 viewers)', analysisMs));
    const p95 = pct(loaded, 0.95);
    console.log(`  ingest p95 under load: ${p95.toFixed(1)} ms — target < ${TARGET_P95_MS} ms: ${p95 < TARGET_P95_MS ? 'met' : 'NOT met'}`);
  } finally {
    server?.kill('SIGTERM');
    destroyCluster(cluster);
  }
}

if (process.argv[1] && path.resolve(process.argv[1]) === path.resolve(PROJECT_ROOT, 'tests/bench/analysisLoad.ts')) {
  await benchAnalysisLoad();
}
