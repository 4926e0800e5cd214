import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { mkdtempSync, chmodSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
import { pino } from 'pino';
import type { Express } from 'express';
import { createApp } from '../../server/app.js';
import { AnalysisPool } from '../../server/analysis/pool.js';
import {
  startCluster,
  startReplica,
  destroyCluster,
  freePort,
  type LocalCluster,
} from '../../server/db/cluster.js';
import { ensureDatabase, type Database } from '../../server/db/connection.js';
import { prepareDatabase } from '../../server/db/prepare.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import { TEST_JWT_SECRET } from '../helpers/app.js';

// Issue 15: with a read replica (DATABASE_REPLICA_URL), analyses and replay reads go to it. Tested
// against a real hot standby streaming from a primary of its own (server/db/cluster.ts).
let primary: LocalCluster;
let standby: LocalCluster;
let db: Database;
let replica: pg.Pool;
let analysis: AnalysisPool;
let app: Express;
let token: string;
const auth = () => ({ authorization: `Bearer ${token}` });

/** Waits until the standby has replayed everything the primary wrote so far. */
async function caughtUp(): Promise<void> {
  const lsn = (await db.pool.query<{ l: string }>('SELECT pg_current_wal_lsn()::text AS l')).rows[0]
    .l;
  for (let i = 0; i < 200; i++) {
    const r = await replica.query<{ ok: boolean }>(
      'SELECT pg_last_wal_replay_lsn() >= $1::pg_lsn AS ok',
      [lsn],
    );
    if (r.rows[0].ok) return;
    await new Promise((res) => setTimeout(res, 50));
  }
  throw new Error('the standby did not catch up in 10 s');
}

beforeAll(async () => {
  const tmp = mkdtempSync(path.join(os.tmpdir(), 'driftbench-replica-'));
  chmodSync(tmp, 0o755);
  primary = startCluster(path.join(tmp, 'primary'), await freePort(), () => {});
  await ensureDatabase(primary.url('postgres'), 'lab');
  db = await prepareDatabase(primary.url('lab'), { demo: true, poolMax: 4 });
  standby = startReplica(primary, path.join(tmp, 'standby'), await freePort(), () => {});
  replica = new pg.Pool({ connectionString: standby.url('lab'), max: 2 });
  analysis = new AnalysisPool(standby.url('lab'), 1, { openFreshMs: 0 });
  app = createApp({
    db,
    jwtSecret: TEST_JWT_SECRET,
    log: pino({ level: 'silent' }),
    analysis,
    replica,
    loginRateLimit: 1000,
    loginAccountLimit: 1000,
  });
  const login = await request(app)
    .post('/api/auth/login')
    .send({ email: `lead@${DEMO_DOMAIN}`, password: DEMO_PASSWORD });
  expect(login.status).toBe(200);
  token = login.body.token;
}, 120_000);

afterAll(async () => {
  await analysis?.close();
  await replica?.end();
  await db?.close();
  if (standby) destroyCluster(standby);
  if (primary) destroyCluster(primary);
});

async function captureWith(n: number): Promise<number> {
  const study = await request(app).get('/api/studies/1').set(auth());
  const res = await request(app).post('/api/captures').set(auth()).send({
    dutId: study.body.duts[0].id,
    checkpointId: study.body.checkpoints[0].id,
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
  });
  expect(res.status).toBe(201);
  const readings = Array.from({ length: n }, (_, i) => ({
    seq: i,
    t: i,
    value: 16e6 + (i % 7) * 1e-3,
  }));
  expect(
    (
      await request(app)
        .post(`/api/captures/${res.body.id}/readings`)
        .set(auth())
        .send({ readings })
    ).status,
  ).toBe(200);
  return res.body.id;
}

describe('a read replica', () => {
  it('is a real standby: read-only, and it follows the primary', async () => {
    expect((await replica.query<{ r: boolean }>('SELECT pg_is_in_recovery() AS r')).rows[0].r).toBe(
      true,
    );
    await expect(replica.query('CREATE TABLE nope (x int)')).rejects.toThrow(/read-only/);
    const id = await captureWith(10);
    await caughtUp();
    expect(
      (await replica.query('SELECT count(*)::int AS n FROM readings WHERE capture_id = $1', [id]))
        .rows[0].n,
    ).toBe(10);
  });

  it('serves replay pages of a finished capture and analyses; a recording capture is read from the primary', async () => {
    const finished = await captureWith(200);
    expect((await request(app).post(`/api/captures/${finished}/finish`).set(auth())).status).toBe(
      200,
    );
    const open = await captureWith(300);
    await caughtUp();
    // Hold the standby where it is, then change the primary: whatever answers from here on shows
    // which database it came from.
    await replica.query('SELECT pg_wal_replay_pause()');
    try {
      await db.pool.query('UPDATE readings SET value = 1 WHERE capture_id = $1 AND seq = 5', [
        finished,
      ]);
      const more = Array.from({ length: 50 }, (_, i) => ({
        seq: 300 + i,
        t: 300 + i,
        value: 16e6,
      }));
      expect(
        (
          await request(app)
            .post(`/api/captures/${open}/readings`)
            .set(auth())
            .send({ readings: more })
        ).status,
      ).toBe(200);

      const replay = await request(app)
        .get(`/api/captures/${finished}/readings`)
        .query({ from: 0, to: 9 })
        .set(auth());
      expect(replay.status).toBe(200);
      expect(replay.body.readings[5].value).toBe(16e6 + 5e-3); // the standby's copy, not the primary's 1
      const live = await request(app).get(`/api/captures/${open}/readings`).set(auth());
      expect(live.body.readings).toHaveLength(350); // the primary's rows, the newest included

      const a = await request(app).get(`/api/captures/${open}/analysis`).set(auth());
      expect(a.status).toBe(200);
      expect(a.body.coverage.readings).toBe(300); // computed on the standby, and it says so
      expect(a.body.coverage.captureReadings).toBe(350);
    } finally {
      await replica.query('SELECT pg_wal_replay_resume()');
    }
    await caughtUp();
    const later = await request(app).get(`/api/captures/${open}/analysis`).set(auth());
    expect(later.body.coverage.readings).toBe(350);
  });
});
