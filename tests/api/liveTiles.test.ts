import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { seeded } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';

// Issue 15: min/max tiles are kept up to date while a capture records (a trigger on readings,
// migration 20261202-0110), so a decimated read of an open capture reads tiles as a finished one does.
const demo = useDemoApp();
const { auth, newCapture, postReadings } = demo;

type R = { seq: number; t: number; value: number };
interface Tile {
  level: number;
  bucket: number;
  min_seq: number;
  min_value: number;
  max_seq: number;
  max_value: number;
}

/**
 * The tiles a reading set should have, by the definition (common practice, no source): level L
 * groups seqs by floor(seq / (64·2^L)) and keeps the lowest and the highest value, the smallest
 * seq among equal values. Written here independently of the trigger and of buildTiles.
 */
function expectedTiles(readings: R[], levels: number[]): Tile[] {
  const out: Tile[] = [];
  for (const level of levels) {
    const size = 64 * 2 ** level;
    const groups = new Map<number, R[]>();
    for (const r of readings) {
      const b = Math.floor(r.seq / size);
      if (!groups.has(b)) groups.set(b, []);
      groups.get(b)!.push(r);
    }
    for (const [bucket, rs] of [...groups].sort((a, b) => a[0] - b[0])) {
      const bySeq = [...rs].sort((a, b) => a.seq - b.seq);
      let lo = bySeq[0];
      let hi = bySeq[0];
      for (const r of bySeq) {
        if (r.value < lo.value) lo = r;
        if (r.value > hi.value) hi = r;
      }
      out.push({
        level,
        bucket,
        min_seq: lo.seq,
        min_value: lo.value,
        max_seq: hi.seq,
        max_value: hi.value,
      });
    }
  }
  return out;
}

async function storedTiles(id: number, levels: number[]): Promise<Tile[]> {
  const res = await demo.t.db.pool.query<Tile>(
    `SELECT level, bucket, min_seq, min_value, max_seq, max_value FROM reading_tiles
     WHERE capture_id = $1 AND level = ANY($2) ORDER BY level, bucket`,
    [id, levels],
  );
  return res.rows;
}

describe('tiles of an open capture', () => {
  it('match the definition after in-order batches, a gap filled late, a resend with other values and ties', async () => {
    const id = await newCapture();
    const rand = seeded(15);
    const kept = new Map<number, R>();
    const post = async (readings: R[]) => {
      const res = await postReadings(id, readings);
      expect(res.status).toBe(200);
      // What the database keeps: the first value sent for each seq.
      for (const r of readings) if (!kept.has(r.seq)) kept.set(r.seq, r);
    };
    const make = (seq: number, value?: number): R => ({
      seq,
      t: seq * 0.5,
      value: value ?? 16e6 + rand.gauss() * 1e-3,
    });
    // Seqs 0–2999 in batches of 300, except 1000–1099, which come last.
    for (let b = 0; b < 3000; b += 300) {
      await post(
        Array.from({ length: 300 }, (_, i) => make(b + i)).filter(
          (r) => r.seq < 1000 || r.seq >= 1100,
        ),
      );
    }
    // Equal extremes inside one 64-run: the smaller seq must win for both min and max.
    await post([
      make(3000, 16e6 + 1),
      make(3001, 16e6 - 1),
      make(3002, 16e6 + 1),
      make(3003, 16e6 - 1),
    ]);
    // The gap, out of order, then a resend of stored seqs with absurd values (refused as duplicates).
    await post(Array.from({ length: 100 }, (_, i) => make(1099 - i)));
    await post([make(10, 16e6 + 1e6), make(2000, 16e6 - 1e6)]);
    const levels = [0, 1, 3, 6, 20];
    expect(await storedTiles(id, levels)).toEqual(expectedTiles([...kept.values()], levels));
    const top = await storedTiles(id, [20]);
    expect(top).toHaveLength(1);
    expect(top[0].max_value).toBe(16e6 + 1);
    expect(top[0].max_seq).toBe(3000);
    expect(top[0].min_seq).toBe(3001);
  });

  it('serve the decimated read of an open capture, and the read is the same once it is finished', async () => {
    const id = await newCapture();
    const n = 20_000;
    const readings = Array.from({ length: n }, (_, i) => ({
      seq: i,
      t: i * 0.01,
      value: i === 12_345 ? 99 : i === 777 ? -99 : Math.sin(i / 500),
    }));
    for (let b = 0; b < n; b += 5000) {
      const res = await postReadings(id, readings.slice(b, b + 5000));
      expect(res.status).toBe(200);
    }
    const read = async (q: string) =>
      (
        await request(demo.t.app)
          .get(`/api/captures/${id}/readings?${q}`)
          .set(await auth('viewer'))
      ).body;
    const open = await read('maxPoints=200');
    const openZoom = await read('from=1000&to=15000&maxPoints=300');
    expect(open.decimated).toBe(true);
    const values = open.readings.map((r: R) => r.value);
    expect(Math.max(...values)).toBe(99);
    expect(Math.min(...values)).toBe(-99);
    expect(open.readings.length).toBeLessThanOrEqual(200);

    // Proof that the open read came from the tiles: a tile changed behind the API's back shows.
    // 200 points = 100 pairs; the finest level whose tiles over 20,000 seqs leave room for two edges:
    // ⌈20000/128⌉ + 2 = 159 > 100, ⌈20000/256⌉ + 2 = 81 ≤ 100 → level 2 (256 seqs a tile).
    const level = 2;
    const probe = await demo.t.db.pool.query(
      'UPDATE reading_tiles SET max_value = 12345 WHERE capture_id = $1 AND level = $2 AND bucket = 1 RETURNING max_seq',
      [id, level],
    );
    expect(probe.rowCount).toBe(1);
    expect((await read('maxPoints=200')).readings.map((r: R) => r.value)).toContain(12345);
    await demo.t.db.pool.query(
      'UPDATE reading_tiles SET max_value = (SELECT value FROM readings WHERE capture_id = $1 AND seq = $3) WHERE capture_id = $1 AND level = $2 AND bucket = 1',
      [id, level, probe.rows[0].max_seq],
    );

    const fin = await request(demo.t.app)
      .post(`/api/captures/${id}/finish`)
      .set(await auth('technician'));
    expect(fin.status).toBe(200);
    expect(await read('maxPoints=200')).toEqual(open);
    expect(await read('from=1000&to=15000&maxPoints=300')).toEqual(openZoom);
  });
});
