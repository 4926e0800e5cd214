import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { createHash } from 'node:crypto';
import { useDemoApp } from '../helpers/demoApp.js';
import { capture, plannedStudy } from '../helpers/review.js';

const demo = useDemoApp();

/**
 * The canonical serialisation as docs/record.md states it, written here from the document (not
 * from the server's code): per reading in ascending seq, 22 bytes big-endian — uint32 seq,
 * binary64 t, binary64 value, int16 flags.
 */
function documentedSeal(
  readings: Array<{ seq: number; t: number; value: number; flags?: number }>,
): string {
  const buf = new ArrayBuffer(readings.length * 22);
  const dv = new DataView(buf);
  readings.forEach((r, i) => {
    const o = i * 22;
    dv.setUint32(o, r.seq, false);
    dv.setFloat64(o + 4, r.t, false);
    dv.setFloat64(o + 12, r.value, false);
    dv.setInt16(o + 20, r.flags ?? 0, false);
  });
  return createHash('sha256').update(new Uint8Array(buf)).digest('hex');
}

describe('sealed evidence', () => {
  it('stores the digest of the documented serialisation when a capture finishes and verifies it', async () => {
    const plan = await plannedStudy(demo.t, 'Sealed study');
    const eng = await demo.auth('engineer');
    const c = await request(demo.t.app).post('/api/captures').set(eng).send({
      dutId: plan.dutId,
      checkpointId: plan.checkpointId,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
    });
    const readings = [
      { seq: 0, t: 0, value: 10_000_000.0012 },
      { seq: 1, t: 1.0000001, value: 10_000_000.0015, flags: 1 },
      { seq: 2, t: 2, value: 9_999_999.9987 },
      { seq: 3, t: 3, value: 10_000_000.0009 },
    ];
    // Sent out of order: the seal follows seq, not arrival.
    await request(demo.t.app)
      .post(`/api/captures/${c.body.id}/readings`)
      .set(eng)
      .send({ readings: [readings[2], readings[0], readings[3], readings[1]] });
    const open = await request(demo.t.app)
      .get(`/api/captures/${c.body.id}/seal`)
      .set(await demo.auth('viewer'));
    expect(open.body).toMatchObject({ sha256: null, verified: null, readings: 4 });
    await request(demo.t.app).post(`/api/captures/${c.body.id}/finish`).set(eng);
    const res = await request(demo.t.app)
      .get(`/api/captures/${c.body.id}/seal`)
      .set(await demo.auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({
      sha256: documentedSeal(readings),
      readings: 4,
      verified: true,
    });
    const cap = await request(demo.t.app)
      .get(`/api/captures/${c.body.id}`)
      .set(await demo.auth('viewer'));
    expect(cap.body.sealSha256).toBe(res.body.sha256);
  });

  it('says verified: false after one reading is changed in SQL', async () => {
    const plan = await plannedStudy(demo.t, 'Tampered study');
    const id = await capture(demo.t, plan, { n: 200 });
    const before = await request(demo.t.app)
      .get(`/api/captures/${id}/seal`)
      .set(await demo.auth('viewer'));
    expect(before.body.verified).toBe(true);
    await demo.t.db.pool.query(
      'UPDATE readings SET value = value + 1e-6 WHERE capture_id = $1 AND seq = 117',
      [id],
    );
    const after = await request(demo.t.app)
      .get(`/api/captures/${id}/seal`)
      .set(await demo.auth('viewer'));
    expect(after.body).toMatchObject({
      sha256: before.body.sha256,
      verified: false,
      readings: 200,
    });
    expect(after.body.recomputed).not.toBe(before.body.sha256);
    // The captures list and the capture carry the flag too, without recomputing.
    const one = await request(demo.t.app)
      .get(`/api/captures/${id}`)
      .set(await demo.auth('viewer'));
    expect(one.body.sealBroken).toBe(true);
    const list = await request(demo.t.app)
      .get(`/api/captures?studyId=${plan.studyId}`)
      .set(await demo.auth('viewer'));
    expect(list.body.captures.find((c: { id: number }) => c.id === id).sealBroken).toBe(true);
    const matrix = await request(demo.t.app)
      .get(`/api/studies/${plan.studyId}/matrix`)
      .set(await demo.auth('viewer'));
    expect(matrix.body.rows[0].cells[0].capture).toMatchObject({ id, sealBroken: true });
    const untouched = await capture(demo.t, plan, { n: 10 });
    expect(
      (
        await request(demo.t.app)
          .get(`/api/captures/${untouched}`)
          .set(await demo.auth('viewer'))
      ).body.sealBroken,
    ).toBe(false);
  });

  it('says verified: false when a reading is deleted, and shows it in the report', async () => {
    const plan = await plannedStudy(demo.t, 'Reading removed');
    const id = await capture(demo.t, plan, { n: 20 });
    await demo.t.db.pool.query('DELETE FROM readings WHERE capture_id = $1 AND seq = 3', [id]);
    const after = await request(demo.t.app)
      .get(`/api/captures/${id}/seal`)
      .set(await demo.auth('viewer'));
    expect(after.body).toMatchObject({ verified: false, readings: 19 });
    const report = await request(demo.t.app)
      .get(`/api/studies/${plan.studyId}/report`)
      .set(await demo.auth('viewer'));
    expect(report.body.captures.find((c: { id: number }) => c.id === id).seal.verified).toBe(false);
  });

  it('answers 404 for a missing capture', async () => {
    expect(
      (
        await request(demo.t.app)
          .get('/api/captures/987654/seal')
          .set(await demo.auth('viewer'))
      ).status,
    ).toBe(404);
  });
});
