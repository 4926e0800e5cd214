// A representative walk through the API — plan a study, record two captures, compare them, review
// and approve, read the record — checking every answer against its route's schema in
// shared/protocol/responses.ts. The check here is the test's own (independent of the server's
// test-time response check), so a drift between a service and the contract fails this file.
// The live socket's side of the contract is tested in live.test.ts.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import type { z } from 'zod';
import { createTestApp, type TestApp } from '../helpers/app.js';
import { RESPONSES, type JsonRouteKey } from '../../shared/protocol/responses.js';

let t: TestApp;
const tokens: Record<string, string> = {};
const checked = new Set<string>();

beforeAll(async () => {
  t = await createTestApp();
  for (const role of ['admin', 'lead', 'engineer', 'technician', 'viewer'])
    tokens[role] = await t.tokenFor(role);
});
afterAll(async () => {
  await t.close();
});

/**
 * Calls `path` as `role` and parses the answer with the schema of route `key` (which must match
 * the method); fails with the route, the status and the first schema problem.
 */
async function call<K extends JsonRouteKey>(
  role: string,
  key: K,
  path: string,
  body?: unknown,
): Promise<z.infer<(typeof RESPONSES)[K]>> {
  const method = key.split(' ')[0].toLowerCase() as 'get' | 'post' | 'patch' | 'put';
  let req = request(t.app)[method](path).set('authorization', `Bearer ${tokens[role]}`);
  if (body !== undefined) req = req.send(body as object);
  const res = await req;
  expect(
    res.status,
    `${key} → ${res.status} ${JSON.stringify(res.body).slice(0, 300)}`,
  ).toBeLessThan(300);
  const parsed = (RESPONSES[key] as z.ZodType).safeParse(res.body);
  if (!parsed.success) {
    const i = parsed.error.issues[0];
    expect.fail(`${key}: ${i.path.join('.')}: ${i.message}`);
  }
  checked.add(key);
  return parsed.data as z.infer<(typeof RESPONSES)[K]>;
}

const readings = (n: number, base: number) =>
  Array.from({ length: n }, (_, i) => ({
    seq: i,
    t: i,
    value: base + 0.001 * Math.sin(i) + 1e-5 * i,
  }));

describe('the contract over a representative walk', () => {
  it('answers every step in the shape shared/protocol names', async () => {
    await call('viewer', 'GET /api/health', '/api/health');
    const me = await call('engineer', 'GET /api/auth/me', '/api/auth/me');
    expect(typeof me.user.id).toBe('number');
    await call('viewer', 'GET /api/dashboard', '/api/dashboard');
    const { instruments } = await call('viewer', 'GET /api/instruments', '/api/instruments');
    const counter = instruments.find((i) => i.kind === 'counter');
    expect(counter).toBeDefined();
    await call('viewer', 'GET /api/instruments/:id', `/api/instruments/${counter!.id}`);
    const { references } = await call('viewer', 'GET /api/references', '/api/references');
    await call('admin', 'GET /api/users', '/api/users');
    await call('viewer', 'GET /api/studies', '/api/studies');

    // Plan a study: two checkpoints, one crystal.
    const study = await call('engineer', 'POST /api/studies', '/api/studies', {
      title: 'Contract walk',
      allowSimulated: true,
    });
    const before = await call(
      'engineer',
      'POST /api/studies/:id/checkpoints',
      `/api/studies/${study.id}/checkpoints`,
      {
        name: 'As received',
        order: 0,
      },
    );
    const after = await call(
      'engineer',
      'POST /api/studies/:id/checkpoints',
      `/api/studies/${study.id}/checkpoints`,
      {
        name: 'After bake',
        order: 1,
      },
    );
    const dut = await call(
      'engineer',
      'POST /api/studies/:id/duts',
      `/api/studies/${study.id}/duts`,
      {
        label: 'Q1 crystal',
        kind: 'crystal',
        nominal: 16_000_000,
        unit: 'Hz',
        limit: 5,
        limitUnit: 'ppm',
      },
    );
    await call('engineer', 'PATCH /api/duts/:id', `/api/duts/${dut.id}`, { serial: 'CW-0001' });
    await call('viewer', 'GET /api/studies/:id', `/api/studies/${study.id}`);

    // Record two captures through the ingest path and finish them.
    const ids: number[] = [];
    for (const [cp, base] of [
      [before.id, 16_000_000.02],
      [after.id, 16_000_000.05],
    ] as const) {
      const capture = await call('technician', 'POST /api/captures', '/api/captures', {
        dutId: dut.id,
        checkpointId: cp,
        quantity: 'frequency',
        unit: 'Hz',
        gateTime: 1,
        instrumentId: counter!.id,
        referenceId: references[0]?.id,
        ambientC: 23,
      });
      const ingest = await call(
        'technician',
        'POST /api/captures/:id/readings',
        `/api/captures/${capture.id}/readings`,
        {
          readings: readings(200, base),
        },
      );
      expect(ingest.accepted).toBe(200);
      const finished = await call(
        'technician',
        'POST /api/captures/:id/finish',
        `/api/captures/${capture.id}/finish`,
        {},
      );
      expect(finished.state).toBe('finished');
      ids.push(capture.id);
    }
    await call('technician', 'PATCH /api/captures/:id', `/api/captures/${ids[0]}`, {
      notes: 'first of two',
    });

    // Read them back the ways the pages do.
    const list = await call('viewer', 'GET /api/captures', `/api/captures?studyId=${study.id}`);
    expect(list.captures.map((c) => c.id).sort()).toEqual([...ids].sort());
    const detail = await call('viewer', 'GET /api/captures/:id', `/api/captures/${ids[1]}`);
    expect(detail.summary?.stats?.n).toBe(200);
    await call('viewer', 'GET /api/captures/:id/readings', `/api/captures/${ids[1]}/readings`);
    await call(
      'viewer',
      'GET /api/captures/:id/readings',
      `/api/captures/${ids[1]}/readings?maxPoints=50`,
    );
    await call(
      'viewer',
      'GET /api/captures/:id/analysis',
      `/api/captures/${ids[1]}/analysis?kind=adev`,
    );
    const comparison = await call(
      'viewer',
      'GET /api/comparisons',
      `/api/comparisons?before=${ids[0]}&after=${ids[1]}`,
    );
    expect(['within', 'exceeds', 'inconclusive']).toContain(comparison.verdict);
    const matrix = await call(
      'viewer',
      'GET /api/studies/:id/matrix',
      `/api/studies/${study.id}/matrix`,
    );
    expect(matrix.rows[0].cells[1].comparison?.verdict).toBe(comparison.verdict);
    await call(
      'viewer',
      'GET /api/captures/stability',
      `/api/captures/stability?ids=${ids.join(',')}&kind=oadev`,
    );
    await call('viewer', 'GET /api/captures/:id/seal', `/api/captures/${ids[0]}/seal`);
    await call(
      'viewer',
      'GET /api/captures/:id/attachments',
      `/api/captures/${ids[0]}/attachments`,
    );

    // Review: submit, approve, then the record.
    await call('engineer', 'POST /api/studies/:id/submit', `/api/studies/${study.id}/submit`, {
      note: 'ready',
    });
    const approved = await call(
      'lead',
      'POST /api/studies/:id/approve',
      `/api/studies/${study.id}/approve`,
      {
        password: 'driftbench-demo',
      },
    );
    expect(approved.status).toBe('approved');
    const reviews = await call(
      'viewer',
      'GET /api/studies/:id/reviews',
      `/api/studies/${study.id}/reviews`,
    );
    expect(reviews.revisions).toHaveLength(1);
    await call('viewer', 'GET /api/studies/:id/audit', `/api/studies/${study.id}/audit`);
    await call('viewer', 'GET /api/studies/:id/report', `/api/studies/${study.id}/report`);
    await call(
      'viewer',
      'GET /api/studies/:id/report',
      `/api/studies/${study.id}/report?revision=1`,
    );
    await call(
      'viewer',
      'GET /api/studies/:id/attachments',
      `/api/studies/${study.id}/attachments`,
    );
    await call('admin', 'GET /api/audit', '/api/audit?limit=20');
    await call('admin', 'GET /api/audit/verify', '/api/audit/verify');
    await call('admin', 'GET /api/outbox', '/api/outbox');
    await call('admin', 'GET /api/outbox/received', '/api/outbox/received');

    // The walk covers a fair share of the table.
    expect(checked.size).toBeGreaterThanOrEqual(35);
  }, 180_000);
});
