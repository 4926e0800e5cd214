// No N+1: the captures list (with its names) and the study matrix cost the same number of
// database queries for a study of 2 DUTs as for one of 10. Every statement is counted — Sequelize's
// through its logging hook, raw ones through the pg pool — while one request runs.
import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { gaussReadings } from '../helpers/demo.js';

const demo = useDemoApp();
const { auth, queriesOf } = demo;

const NOMINAL = 16_000_000;

async function studyWith(
  duts: number,
): Promise<{ id: number; dutIds: number[]; checkpointIds: number[] }> {
  const planner = await auth('engineer');
  const study = await request(demo.t.app)
    .post('/api/studies')
    .set(planner)
    .send({ title: `Query count, ${duts} DUTs`, allowSimulated: true });
  expect(study.status).toBe(201);
  const id = study.body.id as number;
  const checkpointIds: number[] = [];
  for (const name of ['Baseline', 'After wash', 'After bake']) {
    const cp = await request(demo.t.app)
      .post(`/api/studies/${id}/checkpoints`)
      .set(planner)
      .send({ name });
    expect(cp.status).toBe(201);
    checkpointIds.push(cp.body.id);
  }
  const dutIds: number[] = [];
  for (let i = 0; i < duts; i++) {
    const d = await request(demo.t.app)
      .post(`/api/studies/${id}/duts`)
      .set(planner)
      .send({
        label: `Y${i + 1}`,
        kind: 'crystal',
        nominal: NOMINAL,
        unit: 'Hz',
        limit: 1,
        limitUnit: 'ppm',
      });
    expect(d.status).toBe(201);
    dutIds.push(d.body.id);
  }
  // Every DUT captured at every checkpoint, against the demo's reference on the demo's counter.
  let seed = duts * 100;
  for (const dutId of dutIds) {
    for (const checkpointId of checkpointIds) {
      const readings = gaussReadings(40, seed++, (g) => NOMINAL + 1e-3 * g);
      await demo.recordCapture(readings, {
        dutId,
        checkpointId,
        referenceId: 1,
        instrumentId: 1,
        ambientC: 23,
      });
    }
  }
  return { id, dutIds, checkpointIds };
}

describe('a constant number of queries', () => {
  let small: Awaited<ReturnType<typeof studyWith>>;
  let large: Awaited<ReturnType<typeof studyWith>>;
  beforeAll(async () => {
    small = await studyWith(2);
    large = await studyWith(10);
  }, 120_000);

  it('the study matrix: 2 DUTs cost as many queries as 10', async () => {
    const viewer = await auth('viewer');
    const matrix = (id: number) => request(demo.t.app).get(`/api/studies/${id}/matrix`).set(viewer);
    await matrix(small.id); // warm (nothing cached in the database, but the session is)
    let bodySmall: any;
    let bodyLarge: any;
    const few = await queriesOf(async () => (bodySmall = (await matrix(small.id)).body));
    const many = await queriesOf(async () => (bodyLarge = (await matrix(large.id)).body));
    // The answers are real: every cell after the baseline carries a comparison.
    expect(bodySmall.rows).toHaveLength(2);
    expect(bodyLarge.rows).toHaveLength(10);
    for (const row of bodyLarge.rows) {
      expect(row.cells[0].capture).not.toBeNull();
      expect(row.cells[1].comparison?.verdict).toMatch(/within|inconclusive|exceeds/);
    }
    expect(many).toBe(few);
    expect(few).toBeGreaterThanOrEqual(4); // the counter counts: auth, DUTs, checkpoints, captures at least
    expect(few).toBeLessThanOrEqual(10);
  });

  it('the captures list carries study, DUT, checkpoint and operator names in as few queries for 10 DUTs as for 2', async () => {
    const viewer = await auth('viewer');
    const list = (id: number) =>
      request(demo.t.app).get(`/api/captures?studyId=${id}&limit=100`).set(viewer);
    let small6: any;
    let large30: any;
    const few = await queriesOf(async () => (small6 = (await list(small.id)).body));
    const many = await queriesOf(async () => (large30 = (await list(large.id)).body));
    expect(small6.captures).toHaveLength(6);
    expect(large30.captures).toHaveLength(30);
    const first = large30.captures[0];
    expect(first.study).toEqual({ id: large.id, title: 'Query count, 10 DUTs' });
    expect(first.dut.label).toMatch(/^Y\d+$/);
    expect(['Baseline', 'After wash', 'After bake']).toContain(first.checkpoint.name);
    expect(first.operator.name).toBeTruthy();
    expect(many).toBe(few);
    expect(few).toBeGreaterThanOrEqual(2); // authenticate + the joined page at least
  });

  it('one capture with all its names is one query besides signing the request in', async () => {
    const viewer = await auth('viewer');
    const res = await request(demo.t.app)
      .get('/api/captures')
      .query({ studyId: large.id, limit: 1 })
      .set(viewer);
    const id = res.body.captures[0].id as number;
    let body: any;
    const n = await queriesOf(
      async () => (body = (await request(demo.t.app).get(`/api/captures/${id}`).set(viewer)).body),
    );
    expect(body.study.title).toBe('Query count, 10 DUTs');
    expect(body.reference).not.toBeNull();
    expect(body.instrument).not.toBeNull();
    expect(n).toBeGreaterThanOrEqual(1);
    expect(n).toBeLessThanOrEqual(2); // authenticate (one indexed query) + the joined capture
  });
});
