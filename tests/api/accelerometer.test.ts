import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { gaussReadings } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';

/**
 * Accelerometers as first-class DUTs (issue 13): per-kind limits on PATCH /api/duts/:id, plain
 * acceleration captures compared only with a baseline of the same orientation, and the guided
 * tilt check's result stored per checkpoint and compared across checkpoints in the matrix.
 */
const demo = useDemoApp();
const { auth } = demo;

/**
 * The test part's Z axis (invented, like the demo's): offset +6.1 mg and sensitivity +0.4 % of the
 * ideal 1 g at g_n = 1000 mg, 1.2 mg of white noise. Flat reads 1000·1.004 + 6.1, inverted
 * −1000·1.004 + 6.1, on edge 6.1 (the flip-pair model: common practice, no source).
 */
const PART = { offsetMg: 6.1, sensPct: 0.4, noiseMg: 1.2 };
function ideal(orientation: 'flat' | 'inverted' | 'on-edge' | 'x-up', shiftMg = 0): number {
  const g = orientation === 'flat' ? 1000 : orientation === 'inverted' ? -1000 : 0;
  return g * (1 + PART.sensPct / 100) + PART.offsetMg + shiftMg;
}

interface Made {
  id: number;
  values: number[];
}

async function accelCapture(
  checkpointId: number,
  orientation: 'flat' | 'inverted' | 'on-edge' | 'x-up',
  seed: number,
  shiftMg = 0,
): Promise<Made> {
  const readings = gaussReadings(
    200,
    seed,
    (g) => ideal(orientation, shiftMg) + PART.noiseMg * g,
    0.1,
  );
  const values = readings.map((r) => r.value);
  const id = await demo.recordCapture(readings, demo.accelBody(checkpointId, orientation));
  return { id, values };
}

/** Mean and standard deviation by hand (n − 1), to form the expected figures independently. */
function meanSd(v: number[]): { mean: number; sd: number; n: number } {
  const mean = v.reduce((a, b) => a + b, 0) / v.length;
  const sd = Math.sqrt(v.reduce((a, b) => a + (b - mean) ** 2, 0) / (v.length - 1));
  return { mean, sd, n: v.length };
}

describe('per-kind DUT limits', () => {
  it("sets an accelerometer's offset (mg) and sensitivity (%) limits and audits them", async () => {
    const res = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.accelerometer.id}`)
      .set(await auth('engineer'))
      .send({ limits: { offset: { limit: 20 }, sensitivity: { limit: 1 } } });
    expect(res.status).toBe(200);
    const limits = res.body.dut.limits as Array<{
      key: string;
      unit: string;
      limitLow: number;
      limitHigh: number;
      perAxis: boolean;
    }>;
    expect(limits.map((l) => [l.key, l.unit, l.limitLow, l.limitHigh, l.perAxis])).toEqual([
      ['offset', 'mg', -20, 20, true],
      ['sensitivity', '%', -1, 1, true],
    ]);
    // The offset is the primary quantity: it keeps the DUT's own limit, which plain captures use.
    expect(res.body.dut.limit).toBe(20);
    expect(res.body.dut.limitUnit).toBe('mg');
    // The demo seed already gives these limits (nothing changed, nothing audited): a real change
    // is audited, and the seed's ±1 % comes back afterwards for the tests below.
    const wider = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.accelerometer.id}`)
      .set(await auth('engineer'))
      .send({ limits: { sensitivity: { limit: 1.5 } } });
    expect(wider.status).toBe(200);
    const back = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.accelerometer.id}`)
      .set(await auth('engineer'))
      .send({ limits: { sensitivity: { limit: 1 } } });
    expect(back.status).toBe(200);
    const audit = await request(demo.t.app)
      .get(`/api/studies/${demo.ids.studyId}/audit`)
      .set(await auth('lead'));
    const events = (audit.body.events ?? audit.body.entries ?? audit.body) as Array<{
      action: string;
      subjectId: number;
      details: Record<string, unknown>;
    }>;
    const ev = events.find(
      (e) => e.action === 'dut.update' && e.subjectId === demo.ids.accelerometer.id,
    );
    expect(ev?.details).toHaveProperty('limits');
  });

  it('takes an asymmetric sensitivity limit and a one-sided one', async () => {
    const res = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.accelerometer.id}`)
      .set(await auth('engineer'))
      .send({ limits: { sensitivity: { limitLow: -0.5, limitHigh: 1 } } });
    expect(res.status).toBe(200);
    const s = res.body.dut.limits.find((l: { key: string }) => l.key === 'sensitivity');
    expect([s.limit, s.limitLow, s.limitHigh]).toEqual([null, -0.5, 1]);
    const back = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.accelerometer.id}`)
      .set(await auth('engineer'))
      .send({ limits: { sensitivity: { limit: 1 } } });
    expect(back.status).toBe(200);
  });

  it.each([
    [
      'a stability limit on an accelerometer',
      'accelerometer',
      { stability: { limit: 0.1, tauS: 10 } },
      'limits.stability',
      /not a quantity of an accelerometer/,
    ],
    [
      'a sensitivity limit on a crystal',
      'crystal',
      { sensitivity: { limit: 1 } },
      'limits.sensitivity',
      /not a quantity of a crystal/,
    ],
    [
      'a stability limit without its τ',
      'crystal',
      { stability: { limit: 0.1 } },
      'limits.stability',
      /tauS/,
    ],
    [
      'clearing a required quantity',
      'accelerometer',
      { sensitivity: null },
      'limits.sensitivity',
      /cannot be cleared/,
    ],
    [
      'a limit with nothing in it',
      'accelerometer',
      { offset: {} },
      'limits.offset',
      /give the limit/,
    ],
  ])('refuses %s with 400 naming the field', async (_what, which, limits, path, reason) => {
    const dut = which === 'crystal' ? demo.ids.crystal : demo.ids.accelerometer;
    const res = await request(demo.t.app)
      .patch(`/api/duts/${dut.id}`)
      .set(await auth('engineer'))
      .send({ limits });
    expect(res.status).toBe(400);
    const detail = (res.body.error.details as Array<{ path: string; message: string }>).find(
      (d) => d.path === path,
    );
    expect(detail?.message).toMatch(reason);
  });

  it('refuses bounds in the wrong order at the schema', async () => {
    const res = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.accelerometer.id}`)
      .set(await auth('engineer'))
      .send({ limits: { sensitivity: { limitLow: 1, limitHigh: -1 } } });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0].path).toBe('limits.sensitivity.limitHigh');
  });

  it("sets a crystal's stability limit at a chosen τ and keeps its ppm limit", async () => {
    const res = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.crystal.id}`)
      .set(await auth('engineer'))
      .send({ limits: { stability: { limit: 0.5, tauS: 10 } } });
    expect(res.status).toBe(200);
    const [offset, stability] = res.body.dut.limits;
    expect(offset.key).toBe('frequency-offset');
    expect(offset.unit).toBe('ppm');
    expect(stability).toMatchObject({ key: 'stability', unit: 'ppb', limit: 0.5, tauS: 10 });
    const cleared = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.crystal.id}`)
      .set(await auth('engineer'))
      .send({ limits: { stability: null } });
    expect(cleared.status).toBe(200);
    expect(cleared.body.dut.limits[1].limit).toBeNull();
  });
});

describe('accelerometer comparisons and tilt checks', () => {
  const made: Record<string, Made> = {};

  beforeAll(async () => {
    await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.accelerometer.id}`)
      .set(await auth('engineer'))
      .send({ limits: { offset: { limit: 20 }, sensitivity: { limit: 1 } } });
    const [base, wash, over, bake] = demo.ids.checkpoints;
    // Baseline: the guided tilt check's order (flat, on edge, inverted): inverted is the latest.
    made.baseFlat = await accelCapture(base, 'flat', 1);
    made.baseEdge = await accelCapture(base, 'on-edge', 2);
    made.baseInv = await accelCapture(base, 'inverted', 3);
    // After the wash: a plain flat capture of the unchanged part, then its own tilt check.
    made.washEdge = await accelCapture(wash, 'on-edge', 12);
    made.washInv = await accelCapture(wash, 'inverted', 13);
    made.washFlat = await accelCapture(wash, 'flat', 11);
    // After the over-exposure: a pose the baseline never had.
    made.overX = await accelCapture(over, 'x-up', 21);
    // After the bake: the offset moved by +30 mg.
    made.bakeFlat = await accelCapture(bake, 'flat', 31, 30);
    made.bakeInv = await accelCapture(bake, 'inverted', 32, 30);
  });

  it('compares a plain flat capture with the flat baseline, not the latest (inverted) one, and finds it within', async () => {
    const res = await request(demo.t.app)
      .get(`/api/studies/${demo.ids.studyId}/matrix`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    const row = res.body.rows.find(
      (r: { dut: { id: number } }) => r.dut.id === demo.ids.accelerometer.id,
    );
    const wash = row.cells[1];
    expect(wash.capture.id).toBe(made.washFlat.id);
    expect(wash.comparison.before).toBe(made.baseFlat.id);
    expect(wash.comparison.verdict).toBe('within');
    // The same part: Δ is noise, far from the 2 g a flat-vs-inverted pairing gave (the bug).
    expect(Math.abs(wash.comparison.delta)).toBeLessThan(1);
    const page = await request(demo.t.app)
      .get(`/api/captures/${made.washFlat.id}/baseline`)
      .set(await auth('viewer'));
    expect(page.body).toMatchObject({
      baseline: { id: made.baseFlat.id, checkpointId: demo.ids.checkpoints[0] },
      reason: null,
    });
  });

  it('says "no baseline of this orientation" when the baseline has none', async () => {
    const res = await request(demo.t.app)
      .get(`/api/captures/${made.overX.id}/baseline`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.body.baseline).toBeNull();
    expect(res.body.reason).toBe('no-baseline-orientation');
    expect(res.body.message).toMatch(/No baseline of this orientation/);
    const matrix = await request(demo.t.app)
      .get(`/api/studies/${demo.ids.studyId}/matrix`)
      .set(await auth('viewer'));
    const row = matrix.body.rows.find(
      (r: { dut: { id: number } }) => r.dut.id === demo.ids.accelerometer.id,
    );
    expect(row.cells[2].comparison).toBeNull();
    expect(row.cells[2].problem).toMatch(/No baseline of this orientation/);
  });

  it('refuses to compare acceleration captures of different orientations (422)', async () => {
    const res = await request(demo.t.app)
      .get(`/api/comparisons?before=${made.baseInv.id}&after=${made.washFlat.id}`)
      .set(await auth('viewer'));
    expect(res.status).toBe(422);
    expect(res.body.error.code).toBe('orientation-mismatch');
  });

  it('gives an acceleration capture its own budget: scatter, the LSB and orientation, no frequency lines', async () => {
    const res = await request(demo.t.app)
      .get(`/api/captures/${made.baseFlat.id}/analysis`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    const u = res.body.uncertainty;
    expect(u.components.map((c: { key: string }) => c.key)).toEqual([
      'type-a',
      'resolution',
      'orientation',
    ]);
    const { sd, n } = meanSd(made.baseFlat.values);
    // JCGM 100:2008 §4.2: s/√n; §4.3.7: half an LSB (0.0625 mg, the DBX-3 at ±2 g) over √3; the
    // pose: g(1 − cos 1°) full width, half of it over √3 (common practice, no source). By hand:
    const uA = sd / Math.sqrt(n);
    const uRes = 0.0625 / 2 / Math.sqrt(3);
    const uPose = (1000 * (1 - Math.cos(Math.PI / 180))) / 2 / Math.sqrt(3);
    expect(u.combined).toBeCloseTo(Math.hypot(uA, uRes, uPose), 9);
    expect(u.components.every((c: { unit: string }) => c.unit === 'mg')).toBe(true);
    expect(JSON.stringify(u)).not.toMatch(/counter|gate|timebase|reference/i);
  });

  it("stores the tilt check as the DUT's result at a checkpoint, with its uncertainty", async () => {
    const res = await request(demo.t.app)
      .post(`/api/duts/${demo.ids.accelerometer.id}/tilt-checks`)
      .set(await auth('technician'))
      .send({
        checkpointId: demo.ids.checkpoints[0],
        flatCaptureId: made.baseFlat.id,
        invertedCaptureId: made.baseInv.id,
        onEdgeCaptureId: made.baseEdge.id,
      });
    expect(res.status).toBe(201);
    const tc = res.body.tiltCheck;
    const up = meanSd(made.baseFlat.values);
    const down = meanSd(made.baseInv.values);
    // Flip pair by hand (common practice, no source): offset = (up + down)/2, sensitivity = (up − down)/2 ÷ 1000 mg.
    expect(tc.offsetMg).toBeCloseTo((up.mean + down.mean) / 2, 9);
    expect(tc.sensitivityErrorPct).toBeCloseTo(((up.mean - down.mean) / 2 / 1000) * 100 - 100, 9);
    // And near the part that was built: +6.1 mg, +0.4 % (the test's own model), within the noise.
    expect(tc.offsetMg).toBeCloseTo(PART.offsetMg, 0);
    expect(tc.sensitivityErrorPct).toBeCloseTo(PART.sensPct, 1);
    // u(offset) by JCGM 100 eq. 10 with c = ½ on each capture's three lines (by hand, as above).
    const pose = (1000 * (1 - Math.cos(Math.PI / 180))) / 2 / Math.sqrt(3);
    const res1 = 0.0625 / 2 / Math.sqrt(3);
    const uOff =
      0.5 * Math.sqrt(up.sd ** 2 / up.n + down.sd ** 2 / down.n + 2 * res1 ** 2 + 2 * pose ** 2);
    expect(tc.offset.combined).toBeCloseTo(uOff, 9);
    // Sensitivity in % of ideal: c = 100/(2·1000 mg) on the same lines.
    expect(tc.sensitivity.combined).toBeCloseTo((uOff * 100) / 1000, 9);
    expect(tc.onEdgeOffset.mean).toBeCloseTo(meanSd(made.baseEdge.values).mean, 9);
    const list = await request(demo.t.app)
      .get(`/api/duts/${demo.ids.accelerometer.id}/tilt-checks`)
      .set(await auth('viewer'));
    expect(list.body.tiltChecks.map((x: { id: number }) => x.id)).toEqual([tc.id]);
  });

  it('refuses a tilt check whose captures do not fit their roles', async () => {
    const wrong = await request(demo.t.app)
      .post(`/api/duts/${demo.ids.accelerometer.id}/tilt-checks`)
      .set(await auth('technician'))
      .send({
        checkpointId: demo.ids.checkpoints[0],
        flatCaptureId: made.baseFlat.id,
        invertedCaptureId: made.baseEdge.id,
      });
    expect(wrong.status).toBe(400);
    expect(wrong.body.error.details[0]).toMatchObject({ path: 'invertedCaptureId' });
    expect(wrong.body.error.details[0].message).toMatch(/on-edge, not inverted/);
    const elsewhere = await request(demo.t.app)
      .post(`/api/duts/${demo.ids.accelerometer.id}/tilt-checks`)
      .set(await auth('technician'))
      .send({
        checkpointId: demo.ids.checkpoints[0],
        flatCaptureId: made.washFlat.id,
        invertedCaptureId: made.baseInv.id,
      });
    expect(elsewhere.status).toBe(400);
    expect(elsewhere.body.error.details[0].path).toBe('flatCaptureId');
    const crystal = await request(demo.t.app)
      .post(`/api/duts/${demo.ids.crystal.id}/tilt-checks`)
      .set(await auth('technician'))
      .send({
        checkpointId: demo.ids.checkpoints[0],
        flatCaptureId: made.baseFlat.id,
        invertedCaptureId: made.baseInv.id,
      });
    expect(crystal.status).toBe(409);
    const viewer = await request(demo.t.app)
      .post(`/api/duts/${demo.ids.accelerometer.id}/tilt-checks`)
      .set(await auth('viewer'))
      .send({
        checkpointId: demo.ids.checkpoints[0],
        flatCaptureId: made.baseFlat.id,
        invertedCaptureId: made.baseInv.id,
      });
    expect(viewer.status).toBe(403);
  });

  it('compares tilt checks across checkpoints in the matrix: within for the unchanged part, exceeds for a +30 mg offset', async () => {
    for (const [cp, flat, inv, edge] of [
      [demo.ids.checkpoints[1], made.washFlat.id, made.washInv.id, made.washEdge.id],
      [demo.ids.checkpoints[3], made.bakeFlat.id, made.bakeInv.id, null],
    ] as const) {
      const r = await request(demo.t.app)
        .post(`/api/duts/${demo.ids.accelerometer.id}/tilt-checks`)
        .set(await auth('technician'))
        .send({
          checkpointId: cp,
          flatCaptureId: flat,
          invertedCaptureId: inv,
          onEdgeCaptureId: edge,
        });
      expect(r.status).toBe(201);
    }
    const res = await request(demo.t.app)
      .get(`/api/studies/${demo.ids.studyId}/matrix`)
      .set(await auth('viewer'));
    const row = res.body.rows.find(
      (r: { dut: { id: number } }) => r.dut.id === demo.ids.accelerometer.id,
    );
    const [base, wash, over, bake] = row.cells;
    expect(base.tiltCheck.check.axes.z.offsetMg).toBeCloseTo(PART.offsetMg, 0);
    expect(base.tiltCheck.change).toBeNull();
    const z = wash.tiltCheck.change.axes.z;
    expect(z.offset.verdict).toBe('within'); // |Δ| ≈ 0.2 mg, U ≈ 0.4 mg against ±20 mg
    expect(z.sensitivity.verdict).toBe('within'); // against ±1 %
    expect(z.offset.unit).toBe('mg');
    expect(z.sensitivity.unit).toBe('%');
    expect([z.offset.limitLow, z.offset.limitHigh]).toEqual([-20, 20]);
    expect(over.tiltCheck).toBeNull();
    const b = bake.tiltCheck.change.axes.z;
    expect(b.offset.delta).toBeCloseTo(30, 0);
    expect(b.offset.verdict).toBe('exceeds');
    expect(b.sensitivity.verdict).toBe('within');
    // The crystal's row carries no tilt checks.
    const crystal = res.body.rows.find(
      (r: { dut: { id: number } }) => r.dut.id === demo.ids.crystal.id,
    );
    expect(crystal.cells.every((c: { tiltCheck?: unknown }) => c.tiltCheck === undefined)).toBe(
      true,
    );
  });
});
