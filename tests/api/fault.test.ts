import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import pg from 'pg';
import { createTestDatabase } from '../helpers/db.js';
import { freePort } from '../../server/db/cluster.js';
import { PROJECT_ROOT } from '../../server/index.js';
import { TEST_JWT_SECRET } from '../helpers/app.js';
import { ReadingUploader, MemoryPendingStore } from '../../src/api/uploader.js';
import type { IngestResult, ReadingIn } from '../../shared/protocol/captures.js';

// A real server process is killed (SIGKILL) while the bench's uploader is sending, then started
// again: afterwards every reading is in PostgreSQL exactly once.
let db: { url: string; drop(): Promise<void> };
let port: number;
let child: ChildProcess | undefined;

function startChild(): Promise<ChildProcess> {
  return new Promise((resolve, reject) => {
    // One process (node --import tsx), so SIGKILL really kills the server.
    const p = spawn(
      process.execPath,
      ['--import', 'tsx', path.join(PROJECT_ROOT, 'server/index.ts')],
      {
        cwd: PROJECT_ROOT,
        env: {
          ...process.env,
          DATABASE_URL: db.url,
          PORT: String(port),
          JWT_SECRET: TEST_JWT_SECRET,
          DRIFTBENCH_DEMO: '1',
          DRIFTBENCH_SIMULATORS: '0',
          LOG_LEVEL: 'silent',
          LOGIN_RATE_LIMIT: '1000',
        },
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    let out = '';
    p.stdout!.on('data', (d) => {
      out += String(d);
      if (out.includes('listening')) resolve(p);
    });
    p.stderr!.on('data', (d) => (out += String(d)));
    p.on('exit', (code) => reject(new Error(`server exited early (${code}): ${out}`)));
  });
}

const base = () => `http://127.0.0.1:${port}`;

beforeAll(async () => {
  db = await createTestDatabase();
  port = await freePort();
  child = await startChild();
});
afterAll(async () => {
  child?.kill('SIGKILL');
  await db.drop();
});

describe('ingest through a server crash', () => {
  it('keeps every reading exactly once when the server is killed mid-stream and restarted', async () => {
    const login = await fetch(`${base()}/api/auth/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: 'technician@kestrelbay.example', password: 'driftbench-demo' }),
    }).then((r) => r.json() as Promise<{ token: string }>);
    const headers = { 'content-type': 'application/json', authorization: `Bearer ${login.token}` };
    const study = await fetch(`${base()}/api/studies/1`, { headers }).then(
      (r) => r.json() as Promise<{ duts: { id: number }[]; checkpoints: { id: number }[] }>,
    );
    const capture = await fetch(`${base()}/api/captures`, {
      method: 'POST',
      headers,
      body: JSON.stringify({
        dutId: study.duts[0].id,
        checkpointId: study.checkpoints[0].id,
        quantity: 'frequency',
        unit: 'Hz',
        gateTime: 0.01,
      }),
    }).then((r) => r.json() as Promise<{ id: number }>);

    const send = async (id: number, readings: ReadingIn[]): Promise<IngestResult> => {
      const res = await fetch(`${base()}/api/captures/${id}/readings`, {
        method: 'POST',
        headers,
        body: JSON.stringify({ readings }),
      });
      if (!res.ok) throw new Error(`HTTP ${res.status}`);
      return (await res.json()) as IngestResult;
    };
    const uploader = new ReadingUploader(capture.id, {
      store: new MemoryPendingStore(),
      send,
      batchSize: 200,
      flushMs: 5,
      backoffMs: [50, 400],
    });

    const total = 6000;
    let killed = false;
    for (let seq = 0; seq < total; seq += 100) {
      await uploader.add(
        Array.from({ length: 100 }, (_, i) => ({
          seq: seq + i,
          t: (seq + i) * 0.01,
          value: 16e6 + (seq + i) * 1e-6,
        })),
      );
      await new Promise((r) => setTimeout(r, 5));
      if (!killed && seq >= 2000) {
        killed = true;
        child!.kill('SIGKILL');
        await new Promise((r) => setTimeout(r, 300));
        child = await startChild();
      }
    }
    await uploader.drained();
    const state = uploader.snapshot();
    expect(state.failures).toBeGreaterThan(0);
    expect(state.pending).toBe(0);

    const client = new pg.Client({ connectionString: db.url });
    await client.connect();
    const r = await client.query(
      'SELECT count(*)::int AS n, count(DISTINCT seq)::int AS d, min(seq) AS lo, max(seq) AS hi FROM readings WHERE capture_id = $1',
      [capture.id],
    );
    await client.end();
    expect(r.rows[0]).toEqual({ n: total, d: total, lo: 0, hi: total - 1 });
  });
});
