import request from 'supertest';
import type { Express } from 'express';

/** Ids of the demo study's checkpoints and DUTs, looked up through the API. */
export async function demoIds(app: Express, token: string) {
  const list = await request(app).get('/api/studies').set('authorization', `Bearer ${token}`);
  const study = await request(app)
    .get(`/api/studies/${list.body.studies[0].id}`)
    .set('authorization', `Bearer ${token}`);
  const dut = (prefix: string) =>
    study.body.duts.find((d: { label: string }) => d.label.startsWith(prefix));
  return {
    studyId: study.body.id as number,
    checkpoints: study.body.checkpoints.map((c: { id: number }) => c.id) as number[],
    crystal: dut('Y1') as { id: number; nominal: number },
    tuningFork: dut('Y3') as { id: number; nominal: number },
    accelerometer: dut('U5') as { id: number; nominal: number },
  };
}

/** The body of a 0.1 s acceleration capture (mg, 23 °C) of the accelerometer `dutId` in `orientation`. */
export const accelerationBody = (dutId: number, checkpointId: number, orientation: string) => ({
  dutId,
  checkpointId,
  quantity: 'acceleration',
  unit: 'mg',
  gateTime: 0.1,
  orientation,
  ambientC: 23,
});

/**
 * Readings seq 0…n−1 at t = seq·dt, each value `value(g)` of the next Gaussian draw g of
 * `seeded(seed)` (test data: a nominal plus scaled noise).
 */
export function gaussReadings(n: number, seed: number, value: (g: number) => number, dt = 1) {
  const rnd = seeded(seed);
  return Array.from({ length: n }, (_, i) => ({ seq: i, t: i * dt, value: value(rnd.gauss()) }));
}

/** A deterministic pseudo-random generator (mulberry32) with Gaussian draws, for test data. */
export function seeded(seed: number) {
  let a = seed >>> 0;
  const uniform = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return {
    uniform,
    gauss() {
      const u = Math.max(uniform(), 1e-300);
      return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform());
    },
  };
}
