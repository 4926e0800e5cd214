import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp } from '../helpers/app.js';
import { demoIds, seeded } from '../helpers/demo.js';

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

async function finished(dutId: number, checkpointId: number, mean: number, seed: number) {
  const c = await request(t.app)
    .post('/api/captures')
    .set(await auth('technician'))
    .send({ dutId, checkpointId, quantity: 'frequency', unit: 'Hz', gateTime: 1, referenceId: 1 });
  const rnd = seeded(seed);
  const readings = Array.from({ length: 400 }, (_, i) => ({ seq: i, t: i, value: mean + 1e-4 * rnd.gauss() }));
  await request(t.app).post(`/api/captures/${c.body.id}/readings`).set(await auth('technician')).send({ readings });
  await request(t.app).post(`/api/captures/${c.body.id}/finish`).set(await auth('technician'));
  return c.body.id as number;
}

describe('the study matrix', () => {
  it('gives each DUT × checkpoint its latest capture and its verdict against the baseline', async () => {
    const f0 = ids.tuningFork.nominal; // 32 768 Hz; ±1 ppm is ±0.032768 Hz
    await finished(ids.tuningFork.id, ids.checkpoints[0], f0, 1);
    await finished(ids.tuningFork.id, ids.checkpoints[1], f0 + 0.1 * 1e-6 * f0, 2);
    await finished(ids.tuningFork.id, ids.checkpoints[2], f0 + 2.5 * 1e-6 * f0, 3);
    const res = await request(t.app).get(`/api/studies/${ids.studyId}/matrix`).set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.body.checkpoints.map((c: { id: number }) => c.id)).toEqual(ids.checkpoints);
    const row = res.body.rows.find((r: { dut: { id: number } }) => r.dut.id === ids.tuningFork.id);
    const [base, wash, over, bake] = row.cells;
    expect(base.capture).not.toBeNull();
    expect(base.comparison).toBeNull();
    expect(wash.comparison.verdict).toBe('within');
    expect(over.comparison.verdict).toBe('exceeds');
    expect(over.comparison.deltaPpm).toBeCloseTo(2.5, 1);
    expect(bake).toEqual({ checkpointId: ids.checkpoints[3], capture: null, comparison: null });
    const untouched = res.body.rows.find((r: { dut: { id: number } }) => r.dut.id === ids.crystal.id);
    expect(untouched.cells.every((c: { capture: unknown }) => c.capture === null)).toBe(true);
  });

  it('answers 404 for a missing study', async () => {
    const res = await request(t.app).get('/api/studies/9999/matrix').set(await auth('viewer'));
    expect(res.status).toBe(404);
  });
});
