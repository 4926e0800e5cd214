import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { encodeReadingsF64, READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';
import { float8Array, int2Array, int4Array } from '../../server/db/binaryArrays.js';
import { ReadingFlag } from '../../shared/protocol/reading.js';

// Issue 15, one stream: the compact binary readings body beside JSON, and the binary array
// parameters the ingest statement now sends to PostgreSQL.
const demo = useDemoApp();
const { postBinary } = demo;

describe('binary array parameters', () => {
  it('carry doubles bit for bit and integers exactly through PostgreSQL', async () => {
    // Doubles chosen to break a decimal round trip done carelessly (common practice, no source).
    const doubles = [
      16e6 + 1e-9,
      0.1 + 0.2,
      5e-324,
      -0,
      1.7976931348623157e308,
      -123.456,
      2 ** 53 + 2,
    ];
    const res = await demo.t.db.pool.query(
      'SELECT $1::float8[] AS d, $2::int[] AS i, $3::int2[] AS s, $4::float8[] AS e',
      [
        float8Array(doubles),
        int4Array([0, 1, 2_147_483_647, -5]),
        int2Array([0, 32767, -32768]),
        float8Array([]),
      ],
    );
    const row = res.rows[0];
    expect(row.d).toHaveLength(doubles.length);
    row.d.forEach((v: number, i: number) => expect(Object.is(v, doubles[i])).toBe(true));
    expect(row.i).toEqual([0, 1, 2_147_483_647, -5]);
    expect(row.s).toEqual([0, 32767, -32768]);
    expect(row.e).toEqual([]);
  });
});

describe('POST /api/captures/:id/readings with a binary body', () => {
  it('stores the same readings as JSON would, bit for bit, and a resend never duplicates', async () => {
    const id = await demo.newCapture();
    const readings = Array.from({ length: 3000 }, (_, i) => ({
      seq: i,
      t: i * 0.1 + 1e-7,
      value: 16e6 + i * 1e-9 + 0.1 + 0.2,
      flags: i === 7 ? ReadingFlag.garbled : 0,
    }));
    const first = await postBinary(id, encodeReadingsF64(readings.slice(0, 2000)));
    expect(first.status).toBe(200);
    expect(first.body).toEqual({ accepted: 2000, duplicates: 0, highestSeq: 1999 });
    // The rest as JSON, overlapping the binary batch: the overlap counts as duplicates.
    const second = await request(demo.t.app)
      .post(`/api/captures/${id}/readings`)
      .set(await demo.auth('technician'))
      .send({ readings: readings.slice(1500) });
    expect(second.body).toEqual({ accepted: 1000, duplicates: 500, highestSeq: 2999 });
    const again = await postBinary(id, encodeReadingsF64(readings.slice(0, 10)));
    expect(again.body).toEqual({ accepted: 0, duplicates: 10, highestSeq: 2999 });
    const stored = await demo.t.db.pool.query(
      'SELECT seq, t, value, flags FROM readings WHERE capture_id = $1 ORDER BY seq',
      [id],
    );
    expect(stored.rows).toHaveLength(3000);
    for (const [i, r] of stored.rows.entries()) {
      expect(r.seq).toBe(readings[i].seq);
      expect(Object.is(r.t, readings[i].t)).toBe(true);
      expect(Object.is(r.value, readings[i].value)).toBe(true);
      expect(r.flags).toBe(readings[i].flags);
    }
    const capture = await request(demo.t.app)
      .get(`/api/captures/${id}`)
      .set(await demo.auth('viewer'));
    expect(capture.body.readingCount).toBe(3000);
  });

  it('flags an implausible value sent in binary as it does in JSON', async () => {
    const id = await demo.newCapture();
    const readings = Array.from({ length: 50 }, (_, i) => ({
      seq: i,
      t: i,
      value: i === 40 ? 1e300 : 16e6 + (i % 3) * 1e-3,
    }));
    expect((await postBinary(id, encodeReadingsF64(readings))).status).toBe(200);
    const row = await demo.t.db.pool.query(
      'SELECT value, flags FROM readings WHERE capture_id = $1 AND seq = 40',
      [id],
    );
    expect(row.rows[0].value).toBe(1e300);
    expect(row.rows[0].flags & ReadingFlag.implausible).toBe(ReadingFlag.implausible);
  });

  it('refuses a malformed binary body with 400 naming the reading, and keeps nothing of it', async () => {
    const id = await demo.newCapture();
    const good = Array.from({ length: 10 }, (_, i) => ({ seq: i, t: i, value: 16e6 }));
    const cases: Array<[string, Uint8Array, number]> = [
      ['not a whole number of readings', encodeReadingsF64(good).subarray(0, 33), -1],
      [
        'a fractional seq',
        encodeReadingsF64([...good.slice(0, 4), { seq: 4.5, t: 4, value: 16e6 }]),
        4,
      ],
      ['a negative seq', encodeReadingsF64([{ seq: -1, t: 0, value: 16e6 }]), 0],
      [
        'a value that is not finite',
        encodeReadingsF64([...good.slice(0, 2), { seq: 2, t: 2, value: Number.NaN }]),
        2,
      ],
      [
        'an infinite time',
        encodeReadingsF64([{ seq: 0, t: Number.POSITIVE_INFINITY, value: 16e6 }]),
        0,
      ],
      ['flags out of range', encodeReadingsF64([{ seq: 0, t: 0, value: 16e6, flags: 40000 }]), 0],
    ];
    for (const [, bytes, index] of cases) {
      const res = await postBinary(id, bytes);
      expect(res.status).toBe(400);
      expect(res.body.error.details.index).toBe(index);
    }
    const count = await demo.t.db.pool.query(
      'SELECT count(*)::int AS n FROM readings WHERE capture_id = $1',
      [id],
    );
    expect(count.rows[0].n).toBe(0);
  });

  it('keeps the rules of the JSON route: a viewer gets 403, an anonymous client 401 before its body is read', async () => {
    const id = await demo.newCapture();
    const bytes = encodeReadingsF64([{ seq: 0, t: 0, value: 16e6 }]);
    expect((await postBinary(id, bytes, 'viewer')).status).toBe(403);
    const anonymous = await request(demo.t.app)
      .post(`/api/captures/${id}/readings`)
      .set('content-type', READINGS_F64_TYPE)
      .send(Buffer.from(bytes));
    expect(anonymous.status).toBe(401);
  });
});
