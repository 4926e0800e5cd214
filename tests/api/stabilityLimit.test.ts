import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { gaussReadings } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';

/**
 * A crystal's optional stability limit (issue 13): σy at the limit's τ, its 95 % interval and the
 * verdict, judged per capture in the matrix and on the capture's own route, always from the DUT's
 * current limit.
 */
const demo = useDemoApp();
const { auth } = demo;

/** White FM of σy(1 s) = 1 ppb: σy(τ) = 1 ppb/√τ (NIST SP 1065 Table 3, slope −1/2). */
const SIGMA_1S = 1e-9;
const N = 2000;

async function crystalCapture(checkpointId: number, seed: number): Promise<number> {
  const f0 = demo.ids.crystal.nominal;
  const readings = gaussReadings(N, seed, (g) => f0 * (1 + SIGMA_1S * g));
  // The demo crystal, frequency in Hz at a 1 s gate (recordCapture's defaults).
  return demo.recordCapture(readings, { checkpointId, referenceId: 1, ambientC: 23 });
}

async function setLimit(limit: number, tauS: number): Promise<void> {
  const res = await request(demo.t.app)
    .patch(`/api/duts/${demo.ids.crystal.id}`)
    .set(await auth('engineer'))
    .send({ limits: { stability: { limit, tauS } } });
  expect(res.status).toBe(200);
}

async function cellAt(checkpointId: number) {
  const res = await request(demo.t.app)
    .get(`/api/studies/${demo.ids.studyId}/matrix`)
    .set(await auth('viewer'));
  expect(res.status).toBe(200);
  const row = res.body.rows.find((r: { dut: { id: number } }) => r.dut.id === demo.ids.crystal.id);
  return row.cells.find((c: { checkpointId: number }) => c.checkpointId === checkpointId);
}

let baseId: number;
let washId: number;

beforeAll(async () => {
  baseId = await crystalCapture(demo.ids.checkpoints[0], 101);
  washId = await crystalCapture(demo.ids.checkpoints[1], 102);
});

describe("a crystal's stability limit at τ", () => {
  it('finds a limit well above σy(10 s) within, with σy near 1 ppb/√10 and its 95 % interval', async () => {
    await setLimit(100, 10);
    const cell = await cellAt(demo.ids.checkpoints[1]);
    const s = cell.stability;
    expect(s.verdict).toBe('within');
    expect(s.reason).toBeNull();
    expect(s.limitPpb).toBe(100);
    expect(s.confidence).toBe(0.95);
    const fig = s.after.figure;
    expect(s.after.captureId).toBe(washId);
    // m = round(10 s / 1 s) = 10 (not an octave: computed from the readings).
    expect(fig.m).toBe(10);
    expect(fig.tau).toBe(10);
    // 1 ppb/√10 = 0.316 ppb (SP 1065 Table 3); an estimate over 2000 readings lies within ±25 %.
    expect(fig.dev * 1e9).toBeGreaterThan(0.316 * 0.75);
    expect(fig.dev * 1e9).toBeLessThan(0.316 * 1.25);
    expect(fig.lo).toBeLessThan(fig.dev);
    expect(fig.hi).toBeGreaterThan(fig.dev);
    // The baseline's σy at the same τ rides along for information (before → after).
    expect(s.before.captureId).toBe(baseId);
    expect(s.before.figure.m).toBe(10);
    // The capture page's route gives the same judgement.
    const own = await request(demo.t.app)
      .get(`/api/captures/${washId}/stability-limit`)
      .set(await auth('viewer'));
    expect(own.status).toBe(200);
    expect(own.body.stability.verdict).toBe('within');
    expect(own.body.stability.after.figure.dev).toBeCloseTo(fig.dev, 15);
    expect(own.body.stability.before.captureId).toBe(baseId);
  });

  it('changing the limit changes the verdict at once: a limit well below σy exceeds', async () => {
    await setLimit(0.01, 10);
    const cell = await cellAt(demo.ids.checkpoints[1]);
    expect(cell.stability.limitPpb).toBe(0.01);
    expect(cell.stability.verdict).toBe('exceeds');
    // At an octave τ (8 s) the figure comes from the stored curve, with the same rule.
    await setLimit(0.01, 8);
    const octave = await cellAt(demo.ids.checkpoints[1]);
    expect(octave.stability.after.figure.m).toBe(8);
    expect(octave.stability.verdict).toBe('exceeds');
    expect(octave.stability.after.figure.dev * 1e9).toBeGreaterThan((1 / Math.sqrt(8)) * 0.75);
    // The baseline cell is judged on its own capture (a stability is judged per capture).
    const base = await cellAt(demo.ids.checkpoints[0]);
    expect(base.stability.after.captureId).toBe(baseId);
    expect(base.stability.verdict).toBe('exceeds');
    expect(base.stability.before).toBeNull();
  });

  it('gives inconclusive with the reason when τ is longer than the capture supports', async () => {
    await setLimit(100, 5000);
    const cell = await cellAt(demo.ids.checkpoints[1]);
    expect(cell.stability.verdict).toBe('inconclusive');
    expect(cell.stability.after.figure).toBeNull();
    // OADEV needs N − 2m ≥ 1 phase points (SP 1065 eq 11): m = 5000 needs 10 000 readings.
    expect(cell.stability.reason).toMatch(/^inconclusive: capture too short for τ = 5000 s/);
    expect(cell.stability.reason).toMatch(/10000 readings, the capture has 2000/);
    const own = await request(demo.t.app)
      .get(`/api/captures/${washId}/stability-limit`)
      .set(await auth('viewer'));
    expect(own.body.stability.verdict).toBe('inconclusive');
  });

  it('carries no stability part once the limit is cleared, nor for DUTs without one', async () => {
    const cleared = await request(demo.t.app)
      .patch(`/api/duts/${demo.ids.crystal.id}`)
      .set(await auth('engineer'))
      .send({ limits: { stability: null } });
    expect(cleared.status).toBe(200);
    const cell = await cellAt(demo.ids.checkpoints[1]);
    expect(cell.stability).toBeUndefined();
    const own = await request(demo.t.app)
      .get(`/api/captures/${washId}/stability-limit`)
      .set(await auth('viewer'));
    expect(own.body).toEqual({ stability: null });
    const missing = await request(demo.t.app)
      .get(`/api/captures/999999/stability-limit`)
      .set(await auth('viewer'));
    expect(missing.status).toBe(404);
  });
});
