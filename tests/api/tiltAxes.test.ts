import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { gaussReadings } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';
import { linkPreset } from '../../shared/protocol/linkProfile.js';
import { SPI_AXIS_QUERY } from '../../shared/protocol/accelerometer.js';

/**
 * The tilt check on every axis (issue 13): X as well as Z, at two checkpoints, each axis compared
 * with its own baseline check; the captures say which axis they read (their link profile's poll
 * line) and which pose (their recorded orientation).
 */
const demo = useDemoApp();
const { auth } = demo;

/**
 * An invented part: X offset +4.2 mg and sensitivity +0.3 %, Z +6.1 mg and +0.4 %, 1.2 mg of white
 * noise; an axis up reads 1000·(1 + s) + offset mg, down −1000·(1 + s) + offset, level the offset
 * (the flip-pair model: common practice, no source).
 */
const PART = { x: { offset: 4.2, sens: 0.3 }, z: { offset: 6.1, sens: 0.4 } } as const;
const NOISE_MG = 1.2;

function reading(axis: 'x' | 'z', orientation: string): number {
  const up = axis === 'x' ? 'x-up' : 'flat';
  const down = axis === 'x' ? 'x-down' : 'inverted';
  const g = orientation === up ? 1 : orientation === down ? -1 : 0;
  return 1000 * g * (1 + PART[axis].sens / 100) + PART[axis].offset;
}

async function capture(
  checkpointId: number,
  axis: 'x' | 'z',
  orientation: string,
  seed: number,
): Promise<number> {
  const linkProfile = { ...linkPreset('spi-bridge'), queryCommand: SPI_AXIS_QUERY[axis] };
  const readings = gaussReadings(200, seed, (g) => reading(axis, orientation) + NOISE_MG * g, 0.1);
  return demo.recordCapture(readings, {
    ...demo.accelBody(checkpointId, orientation),
    linkProfile,
  });
}

const made: Record<string, number> = {};

beforeAll(async () => {
  await request(demo.t.app)
    .patch(`/api/duts/${demo.ids.accelerometer.id}`)
    .set(await auth('engineer'))
    .send({ limits: { offset: { limit: 20 }, sensitivity: { limit: 1 } } });
  let seed = 40;
  for (const [tag, cp] of [
    ['base', demo.ids.checkpoints[0]],
    ['wash', demo.ids.checkpoints[1]],
  ] as const) {
    made[`${tag}XUp`] = await capture(cp, 'x', 'x-up', seed++);
    made[`${tag}XLevel`] = await capture(cp, 'x', 'z-up', seed++);
    made[`${tag}XDown`] = await capture(cp, 'x', 'x-down', seed++);
    made[`${tag}ZFlat`] = await capture(cp, 'z', 'flat', seed++);
    made[`${tag}ZDown`] = await capture(cp, 'z', 'inverted', seed++);
  }
});

async function check(body: Record<string, unknown>) {
  return request(demo.t.app)
    .post(`/api/duts/${demo.ids.accelerometer.id}/tilt-checks`)
    .set(await auth('technician'))
    .send(body);
}

describe('tilt checks on X and Z', () => {
  it('forms the X axis from its up and down poses, the level pose as a second offset', async () => {
    const res = await check({
      checkpointId: demo.ids.checkpoints[0],
      axis: 'x',
      flatCaptureId: made.baseXUp,
      invertedCaptureId: made.baseXDown,
      onEdgeCaptureId: made.baseXLevel,
    });
    expect(res.status).toBe(201);
    expect(res.body.tiltCheck.axis).toBe('x');
    // The part's X figures (the test's model above), within the noise of 200 readings.
    expect(res.body.tiltCheck.offsetMg).toBeCloseTo(PART.x.offset, 0);
    expect(res.body.tiltCheck.sensitivityErrorPct).toBeCloseTo(PART.x.sens, 1);
    expect(res.body.tiltCheck.onEdgeOffset.mean).toBeCloseTo(PART.x.offset, 0);
  });

  it('refuses Z poses or a Z reading for an X check, naming the field', async () => {
    const pose = await check({
      checkpointId: demo.ids.checkpoints[0],
      axis: 'x',
      flatCaptureId: made.baseZFlat,
      invertedCaptureId: made.baseXDown,
    });
    expect(pose.status).toBe(400);
    expect(pose.body.error.details[0].path).toBe('flatCaptureId');
    expect(pose.body.error.details[0].message).toMatch(/not x-up \(\+1 g on X\)/);
    // A Z capture recorded as if X were up: its link profile read Z1.
    const wrongAxis = await capture(demo.ids.checkpoints[0], 'z', 'x-up', 99);
    const read = await check({
      checkpointId: demo.ids.checkpoints[0],
      axis: 'x',
      flatCaptureId: wrongAxis,
      invertedCaptureId: made.baseXDown,
    });
    expect(read.status).toBe(400);
    expect(read.body.error.details[0].message).toMatch(/read the Z axis, not X/);
  });

  it('compares each axis with its own baseline check: the unchanged part is within per axis', async () => {
    for (const body of [
      {
        checkpointId: demo.ids.checkpoints[0],
        axis: 'z',
        flatCaptureId: made.baseZFlat,
        invertedCaptureId: made.baseZDown,
      },
      {
        checkpointId: demo.ids.checkpoints[1],
        axis: 'x',
        flatCaptureId: made.washXUp,
        invertedCaptureId: made.washXDown,
        onEdgeCaptureId: made.washXLevel,
      },
      {
        checkpointId: demo.ids.checkpoints[1],
        // Z by default: the old body without an axis still means Z.
        flatCaptureId: made.washZFlat,
        invertedCaptureId: made.washZDown,
      },
    ])
      expect((await check(body)).status).toBe(201);
    const res = await request(demo.t.app)
      .get(`/api/studies/${demo.ids.studyId}/matrix`)
      .set(await auth('viewer'));
    const row = res.body.rows.find(
      (r: { dut: { id: number } }) => r.dut.id === demo.ids.accelerometer.id,
    );
    const [base, wash] = row.cells;
    expect(Object.keys(base.tiltCheck.check.axes).sort()).toEqual(['x', 'z']);
    expect(base.tiltCheck.check.axes.x.offsetMg).toBeCloseTo(PART.x.offset, 0);
    expect(base.tiltCheck.check.axes.z.offsetMg).toBeCloseTo(PART.z.offset, 0);
    const change = wash.tiltCheck.change.axes;
    for (const axis of ['x', 'z'] as const) {
      // |Δ| of a few tenths of a mg (noise only) with U ≈ 0.4 mg, against ±20 mg and ±1 %.
      expect(change[axis].offset.verdict).toBe('within');
      expect(change[axis].sensitivity.verdict).toBe('within');
      expect(Math.abs(change[axis].offset.delta)).toBeLessThan(1);
    }
  });

  it("judges an X capture's pose for X in its own budget", async () => {
    const res = await request(demo.t.app)
      .get(`/api/captures/${made.baseXLevel}/analysis`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    const lines = res.body.uncertainty.components as Array<{ key: string; value: number }>;
    // X level reads g·sin θ: ±1000·sin 1° mg, a/√3 (common practice, no source).
    const pose = lines.find((l) => l.key === 'orientation');
    expect(pose?.value).toBeCloseTo((1000 * Math.sin(Math.PI / 180)) / Math.sqrt(3), 9);
  });
});
