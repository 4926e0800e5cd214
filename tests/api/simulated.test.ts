import { describe, expect, it } from 'vitest';
import { useDemoApp } from '../helpers/demoApp.js';
import { linkPreset } from '../../shared/protocol/linkProfile.js';

// Issue 14: a capture from a simulator is marked simulated when it is created, the mark shows in
// the capture, the captures list and the study matrix, a study keeps simulated captures out unless
// its planner allows them, and every comparison names the conditions that differ.
const demo = useDemoApp();

const as = (role: string) => ({
  get: (url: string) => demo.call(role, 'get', url),
  post: (url: string, body?: object) => demo.call(role, 'post', url, body ?? {}),
  patch: (url: string, body: object) => demo.call(role, 'patch', url, body),
});

/** The talk-only counter preset, through a serial port or the counter simulator. */
async function profileFor(kind: 'simulator' | 'serial') {
  const profile = linkPreset('talk-counter');
  if (kind === 'serial') return profile;
  return {
    ...profile,
    kind,
    simulator: { path: '/sim/counter' as const, params: { preset: 'xtal-16m', checkpoint: '0' } },
  };
}

async function finishedCapture(
  role: string,
  checkpointIndex: number,
  extra: Record<string, unknown>,
) {
  const readings = Array.from({ length: 200 }, (_, seq) => ({
    seq,
    t: seq,
    value: demo.ids.crystal.nominal * (1 + 1e-7 + 1e-9 * Math.cos(seq)),
  }));
  return demo.recordCapture(
    readings,
    { checkpointId: demo.ids.checkpoints[checkpointIndex], ...extra },
    { role },
  );
}

describe('simulated captures', () => {
  it('marks a capture recorded through a simulator link, and keeps the mark in the list', async () => {
    const profile = await profileFor('simulator');
    const id = await finishedCapture('technician', 0, { linkProfile: profile, ambientC: 23 });
    const capture = await as('technician').get(`/api/captures/${id}`);
    expect(capture.body.simulated).toBe(true);
    const list = await as('technician').get('/api/captures');
    const row = (list.body.captures as Array<{ id: number; simulated: boolean }>).find(
      (c) => c.id === id,
    );
    expect(row?.simulated).toBe(true);
  });

  it('leaves a capture through a serial link unmarked, and a client cannot unmark a simulator link', async () => {
    const real = await as('technician').post(
      '/api/captures',
      demo.captureBody({
        checkpointId: demo.ids.checkpoints[1],
        linkProfile: await profileFor('serial'),
      }),
    );
    expect(real.status).toBe(201);
    expect(real.body.simulated).toBe(false);
    const claimed = await as('technician').post(
      '/api/captures',
      demo.captureBody({
        checkpointId: demo.ids.checkpoints[1],
        linkProfile: await profileFor('simulator'),
        simulated: false,
      }),
    );
    expect(claimed.status).toBe(201);
    expect(claimed.body.simulated).toBe(true);
  });

  it('keeps simulated captures out of a study that does not allow them, until its planner does', async () => {
    const study = await as('engineer').post('/api/studies', {
      title: 'Conformal coat — real parts only',
    });
    expect(study.status).toBe(201);
    expect(study.body.allowSimulated).toBe(false);
    const cp = await as('engineer').post(`/api/studies/${study.body.id}/checkpoints`, {
      name: 'Baseline',
    });
    const dut = await as('engineer').post(`/api/studies/${study.body.id}/duts`, {
      label: 'Y9 16 MHz crystal',
      kind: 'crystal',
      nominal: 16e6,
      unit: 'Hz',
      limit: 1,
      limitUnit: 'ppm',
    });
    expect([cp.status, dut.status], JSON.stringify(dut.body)).toEqual([201, 201]);
    const body = demo.captureBody({
      dutId: dut.body.id,
      checkpointId: cp.body.id,
      simulated: true,
    });

    const refused = await as('technician').post('/api/captures', body);
    expect(refused.status).toBe(409);
    expect(refused.body.error.code).toBe('simulated-not-allowed');
    expect(refused.body.error.message).toMatch(/does not accept simulated captures/);

    // A technician cannot change the plan; the engineer can.
    expect(
      (
        await as('technician').patch(`/api/studies/${study.body.id}/settings`, {
          allowSimulated: true,
        })
      ).status,
    ).toBe(403);
    const allowed = await as('engineer').patch(`/api/studies/${study.body.id}/settings`, {
      allowSimulated: true,
    });
    expect(allowed.status).toBe(200);
    expect(allowed.body.allowSimulated).toBe(true);
    expect((await as('technician').post('/api/captures', body)).status).toBe(201);
    expect(
      (
        await as('engineer').patch(`/api/studies/${study.body.id}/settings`, {
          allowSimulated: 'yes',
        })
      ).status,
    ).toBe(400);
  });

  it('shows the mark in the matrix and names mismatched conditions beside the verdict', async () => {
    const refs = (await as('engineer').get('/api/references')).body.references as Array<{
      id: number;
      name: string;
    }>;
    const before = await finishedCapture('engineer', 0, {
      referenceId: refs[0].id,
      ambientC: 23.0,
      orientation: 'flat',
    });
    const after = await finishedCapture('engineer', 2, {
      linkProfile: await profileFor('simulator'),
      ambientC: 26.5,
      orientation: 'flat',
    });

    const comparison = await as('engineer').get(`/api/comparisons?before=${before}&after=${after}`);
    expect(comparison.status).toBe(200);
    const keys = (comparison.body.conditions as Array<{ key: string; message: string }>).map(
      (c) => c.key,
    );
    expect(keys).toEqual(['reference', 'ambient', 'simulated']);
    expect(comparison.body.conditions[0].message).toContain(refs[0].name);

    const matrix = await as('engineer').get(`/api/studies/${demo.ids.studyId}/matrix`);
    const row = (
      matrix.body.rows as Array<{
        dut: { id: number };
        cells: Array<{
          checkpointId: number;
          capture: { id: number; simulated: boolean } | null;
          comparison: { conditions: Array<{ key: string }> } | null;
        }>;
      }>
    ).find((r) => r.dut.id === demo.ids.crystal.id)!;
    const cell = row.cells.find((c) => c.checkpointId === demo.ids.checkpoints[2])!;
    expect(cell.capture?.id).toBe(after);
    expect(cell.capture?.simulated).toBe(true);
    expect(cell.comparison?.conditions.map((c) => c.key)).toEqual([
      'reference',
      'ambient',
      'simulated',
    ]);
  });
});

describe("the bench's target on a capture", () => {
  it('stores a duration or count target for watchers and refuses a malformed one', async () => {
    const base = demo.captureBody({ checkpointId: demo.ids.checkpoints[3] });
    const timed = await as('technician').post('/api/captures', {
      ...base,
      target: { kind: 'duration', seconds: 600 },
    });
    expect(timed.status).toBe(201);
    expect((await as('technician').get(`/api/captures/${timed.body.id}`)).body.target).toEqual({
      kind: 'duration',
      seconds: 600,
    });
    const counted = await as('technician').post('/api/captures', {
      ...base,
      target: { kind: 'count', n: 1000 },
    });
    expect(counted.body.target).toEqual({ kind: 'count', n: 1000 });
    expect(
      (
        await as('technician').post('/api/captures', {
          ...base,
          target: { kind: 'duration', seconds: -1 },
        })
      ).status,
    ).toBe(400);
    expect((await as('technician').post('/api/captures', { ...base })).body.target).toBeNull();
  });
});
