// A representative walk through the API — plan a study, record two captures, compare them, review
// and approve, read the record — checking every answer against its route's schema in
// shared/protocol/responses.ts. The check here is the test's own (independent of the server's
// test-time response check), so a drift between a service and the contract fails this file.
// The live socket's side of the contract is tested in live.test.ts.
import { describe, expect, it } from 'vitest';
import request from 'supertest';
import type { z } from 'zod';
import { useDemoApp } from '../helpers/demoApp.js';
import { RESPONSES, type JsonRouteKey, type ResponseKey } from '../../shared/protocol/responses.js';

const demo = useDemoApp();
const checked = new Set<string>();

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
  return check(key, await demo.call(role, method, path, body as object | undefined));
}

/** Parses a success answer `res` with the schema of route `key`; fails with the first problem. */
function check<K extends JsonRouteKey>(
  key: K,
  res: request.Response,
): z.infer<(typeof RESPONSES)[K]> {
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

/** Calls a CSV route as `role`: a 200 with a CSV body, as its line in RESPONSES says. */
async function callCsv(role: string, key: ResponseKey, path: string): Promise<string> {
  expect(RESPONSES[key]).toBe('csv');
  const res = await demo.call(role, 'get', path);
  expect(res.status, `${key} → ${res.status}`).toBe(200);
  expect(res.headers['content-type']).toMatch(/^text\/csv/);
  checked.add(key);
  return res.text;
}

/** A 16 MHz crystal DUT with a ±5 ppm limit. */
const crystal = (label: string) => ({
  label,
  kind: 'crystal',
  nominal: 16_000_000,
  unit: 'Hz',
  limit: 5,
  limitUnit: 'ppm',
});

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
      crystal('Q1 crystal'),
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

/** Yesterday or a year from now as YYYY-MM-DD (UTC), for calibration records. */
const dayFromNow = (days: number) =>
  new Date(Date.now() + days * 86_400_000).toISOString().slice(0, 10);

/** Each call here is one the server used to answer outside `reply()`; every one is now typed and checked. */
const ROUTED_THROUGH_REPLY: ResponseKey[] = [
  'GET /api/instruments/:id/calibrations',
  'POST /api/instruments/:id/calibrations',
  'POST /api/instruments/:id/away',
  'POST /api/instruments/:id/retire',
  'POST /api/instruments/:id/reinstate',
  'GET /api/references/:id/calibrations',
  'POST /api/references/:id/calibrations',
  'POST /api/references/:id/away',
  'POST /api/references/:id/retire',
  'POST /api/references/:id/reinstate',
  'GET /api/duts/:id/tilt-checks',
  'GET /api/captures/:id/baseline',
  'POST /api/studies/:id/attachments',
  'GET /api/studies/:id/attachments',
  'POST /api/checkpoints/:id/attachments',
  'GET /api/checkpoints/:id/attachments',
  'POST /api/captures/:id/attachments',
  'GET /api/captures/:id/attachments',
  'PATCH /api/studies/:id',
  'POST /api/studies/:id/checkpoints/order',
  'PATCH /api/checkpoints/:id',
  'GET /api/studies/:id/cells',
  'PUT /api/studies/:id/cells',
  'POST /api/captures/:id/exclude',
  'POST /api/captures/:id/include',
  'GET /api/captures/:id/analysis',
  'GET /api/captures/:id/export.csv',
  'GET /api/studies/:id/captures.csv',
];

describe('the contract of the equipment, attachment, editing and export routes', () => {
  it('answers each of them in the shape shared/protocol names', async () => {
    // Equipment: the calibration routes an instrument and a reference share.
    const { instrument } = await call('admin', 'POST /api/instruments', '/api/instruments', {
      name: 'Contract counter',
      kind: 'counter',
    });
    const { reference } = await call('lead', 'POST /api/references', '/api/references', {
      name: 'Contract OCXO',
      nominalHz: 10_000_000,
      fractionalOffset: 1e-9,
      standardUncertainty: 1e-10,
    });
    const record = {
      calibratedOn: dayFromNow(-1),
      dueOn: dayFromNow(364),
      certificate: 'DBX-C-0001',
      issuedBy: 'Driftbench demo calibration lab',
    };
    for (const [role, base, extra] of [
      ['admin', `/api/instruments/${instrument.id}`, {}],
      [
        'lead',
        `/api/references/${reference.id}`,
        { fractionalOffset: 2e-9, standardUncertainty: 1e-10 },
      ],
    ] as const) {
      const subject = base.startsWith('/api/instruments') ? 'instruments' : 'references';
      const recorded = await call(
        role,
        `POST /api/${subject}/:id/calibrations`,
        `${base}/calibrations`,
        {
          ...record,
          ...extra,
        },
      );
      expect(recorded.calibration.certificate).toBe('DBX-C-0001');
      const history = await call(
        role,
        `GET /api/${subject}/:id/calibrations`,
        `${base}/calibrations`,
      );
      expect(history.calibrations).toHaveLength(1);
      const away = await call(role, `POST /api/${subject}/:id/away`, `${base}/away`, {});
      expect(Object.values(away)[0].calibration.state).toBe('away');
      await call(role, `POST /api/${subject}/:id/reinstate`, `${base}/reinstate`, {});
      const retired = await call(role, `POST /api/${subject}/:id/retire`, `${base}/retire`, {
        reason: 'Contract walk',
      });
      expect(Object.values(retired)[0].retiredReason).toBe('Contract walk');
      await call(role, `POST /api/${subject}/:id/reinstate`, `${base}/reinstate`, {});
    }

    // A study with two checkpoints, a crystal and one finished capture.
    const study = await call('engineer', 'POST /api/studies', '/api/studies', {
      title: 'Contract walk, part two',
      allowSimulated: true,
    });
    const cps = [];
    for (const [name, order] of [
      ['As received', 0],
      ['After shock', 1],
    ] as const)
      cps.push(
        await call(
          'engineer',
          'POST /api/studies/:id/checkpoints',
          `/api/studies/${study.id}/checkpoints`,
          {
            name,
            order,
          },
        ),
      );
    const dut = await call(
      'engineer',
      'POST /api/studies/:id/duts',
      `/api/studies/${study.id}/duts`,
      crystal('Q2 crystal'),
    );
    const capture = await call('technician', 'POST /api/captures', '/api/captures', {
      dutId: dut.id,
      checkpointId: cps[0].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      ambientC: 23,
    });
    await call(
      'technician',
      'POST /api/captures/:id/readings',
      `/api/captures/${capture.id}/readings`,
      {
        readings: readings(100, 16_000_000.02),
      },
    );
    await call(
      'technician',
      'POST /api/captures/:id/finish',
      `/api/captures/${capture.id}/finish`,
      {},
    );

    // The analysis route's pre-serialised text, the baseline, a crystal's (empty) tilt checks.
    const analysis = await call(
      'viewer',
      'GET /api/captures/:id/analysis',
      `/api/captures/${capture.id}/analysis?kind=oadev`,
    );
    expect(analysis.stats?.n).toBe(100);
    await call('viewer', 'GET /api/captures/:id/baseline', `/api/captures/${capture.id}/baseline`);
    const tilt = await call(
      'viewer',
      'GET /api/duts/:id/tilt-checks',
      `/api/duts/${dut.id}/tilt-checks`,
    );
    expect(tilt.tiltChecks).toEqual([]);

    // Attachments on each kind of owner, then the lists.
    for (const [owner, id] of [
      ['studies', study.id],
      ['checkpoints', cps[0].id],
      ['captures', capture.id],
    ] as const) {
      const uploaded = check(
        `POST /api/${owner}/:id/attachments`,
        await request(demo.t.app)
          .post(`/api/${owner}/${id}/attachments`)
          .set(await demo.auth('technician'))
          .attach('file', Buffer.from('seq,value\n0,1\n'), {
            filename: `${owner}.csv`,
            contentType: 'text/csv',
          }),
      );
      expect(uploaded.filename).toBe(`${owner}.csv`);
      const list = await call(
        'viewer',
        `GET /api/${owner}/:id/attachments`,
        `/api/${owner}/${id}/attachments`,
      );
      expect(list.attachments.map((a) => a.id)).toContain(uploaded.id);
    }

    // Editing with history: the study, the checkpoint order, a checkpoint, the cell, the evidence.
    const edited = await call('engineer', 'PATCH /api/studies/:id', `/api/studies/${study.id}`, {
      description: 'Two checkpoints, one crystal.',
    });
    expect(edited.description).toBe('Two checkpoints, one crystal.');
    const order = await call(
      'engineer',
      'POST /api/studies/:id/checkpoints/order',
      `/api/studies/${study.id}/checkpoints/order`,
      { ids: [cps[1].id, cps[0].id] },
    );
    expect(order.checkpoints.map((c) => c.id)).toEqual([cps[1].id, cps[0].id]);
    await call('engineer', 'PATCH /api/checkpoints/:id', `/api/checkpoints/${cps[1].id}`, {
      name: 'After drop',
    });
    const cell = `dutId=${dut.id}&checkpointId=${cps[0].id}`;
    const cells = await call(
      'viewer',
      'GET /api/studies/:id/cells',
      `/api/studies/${study.id}/cells?${cell}`,
    );
    expect(cells.captures.map((c) => c.id)).toEqual([capture.id]);
    await call('lead', 'PUT /api/studies/:id/cells', `/api/studies/${study.id}/cells`, {
      dutId: dut.id,
      checkpointId: cps[0].id,
      captureId: capture.id,
    });
    await call('lead', 'POST /api/captures/:id/exclude', `/api/captures/${capture.id}/exclude`, {
      reason: 'Contract walk: left out',
    });
    await call('lead', 'POST /api/captures/:id/include', `/api/captures/${capture.id}/include`, {});

    // The CSV downloads.
    const one = await callCsv(
      'viewer',
      'GET /api/captures/:id/export.csv',
      `/api/captures/${capture.id}/export.csv`,
    );
    expect(one).toContain('# ');
    await callCsv(
      'viewer',
      'GET /api/studies/:id/captures.csv',
      `/api/studies/${study.id}/captures.csv`,
    );

    expect(ROUTED_THROUGH_REPLY.filter((key) => !checked.has(key))).toEqual([]);
  }, 180_000);
});
