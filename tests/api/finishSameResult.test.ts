import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp } from '../helpers/app.js';
import { demoIds } from '../helpers/demo.js';
import { rebuiltTiles } from '../helpers/tiles.js';
import { Capture, Dut } from '../../server/models/index.js';
import { loadSeries } from '../../server/services/readings.js';
import { prepare, reduce } from '../../server/services/captureAnalysis.js';
import { checkSeal, sealOf } from '../../server/services/seal.js';
import { implausibleNote } from '../../shared/protocol/plausibility.js';
import type { ReadingIn } from '../../shared/protocol/captures.js';

// Issue 15, cost growth: finish no longer rebuilds the tiles and computes the summary and the seal
// in steps with turns of the event loop between them (server/services/finish.ts). What it stores
// must be what the former one-piece computation gave: the summary of prepare + reduce over all
// the stored rows, the seal of their serialisation (checked again inside PostgreSQL), and tiles
// equal to a rebuild from the rows.
let t: TestApp;
let ids: Awaited<ReturnType<typeof demoIds>>;
const auth = async (role: string) => ({ authorization: `Bearer ${await t.tokenFor(role)}` });

beforeAll(async () => {
  t = await createTestApp();
  ids = await demoIds(t.app, await t.tokenFor('engineer'));
});
afterAll(async () => {
  await t.close();
});

async function newCapture() {
  const res = await request(t.app)
    .post('/api/captures')
    .set(await auth('technician'))
    .send({
      dutId: ids.crystal.id,
      checkpointId: ids.checkpoints[0],
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
    });
  expect(res.status).toBe(201);
  return res.body.id as number;
}

/** A drifting, noisy series with one far outlier (so the outlier step is exercised). */
const readings = (n: number): ReadingIn[] =>
  Array.from({ length: n }, (_, seq) => ({
    seq,
    t: seq,
    value: 16e6 + seq * 1e-6 + Math.sin(seq * 0.7) * 2e-4 + (seq === 1234 ? 5 : 0),
  }));

async function tiles(id: number) {
  const res = await t.db.pool.query(
    `SELECT level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value
     FROM reading_tiles WHERE capture_id = $1 ORDER BY level, bucket`,
    [id],
  );
  return res.rows;
}

describe('finishing a capture', () => {
  it('stores the same summary, seal and tiles as computing them in one piece from the rows', async () => {
    const id = await newCapture();
    const sent = readings(6000);
    for (let i = 0; i < sent.length; i += 1500) {
      const res = await request(t.app)
        .post(`/api/captures/${id}/readings`)
        .set(await auth('technician'))
        .send({ readings: sent.slice(i, i + 1500) });
      expect(res.status).toBe(200);
    }
    // The one-piece computation, as finish did it before, on the rows as stored.
    const series = await loadSeries(t.db.pool, id);
    const capture = (await Capture.findByPk(id))!;
    const dut = await Dut.findByPk(capture.dutId);
    capture.state = 'finished';
    const want = reduce(capture, dut, prepare(capture, series));
    const note = implausibleNote(series.flags);
    if (note) want.notes.push(note);
    const wantSeal = sealOf(series);
    const open = await tiles(id);

    const fin = await request(t.app)
      .post(`/api/captures/${id}/finish`)
      .set(await auth('technician'));
    expect(fin.status).toBe(200);
    const row = await t.db.pool.query(
      'SELECT state, summary, seal_sha256, reading_count, highest_seq FROM captures WHERE id = $1',
      [id],
    );
    expect(row.rows[0].state).toBe('finished');
    expect(row.rows[0].reading_count).toBe(6000);
    expect(row.rows[0].highest_seq).toBe(5999);
    expect(row.rows[0].summary).toEqual(JSON.parse(JSON.stringify(want)));
    expect(want.counts.outliers).toBeGreaterThan(0);
    expect(row.rows[0].seal_sha256).toBe(wantSeal);
    // The digest recomputed by PostgreSQL from the rows (seal.ts, SEAL_SQL) agrees.
    expect((await checkSeal(t.db.pool, id)).verified).toBe(true);
    // The tiles ingest kept are left as they were and equal a rebuild from the rows.
    const kept = await tiles(id);
    expect(kept).toEqual(open);
    const rebuilt = await rebuiltTiles(t.db.pool, id);
    expect(kept.filter((r) => r.level <= rebuilt[rebuilt.length - 1].level)).toEqual(rebuilt);
  });
});
