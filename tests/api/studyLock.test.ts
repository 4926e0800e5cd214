import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { capture, plannedStudy } from '../helpers/review.js';
import { DEMO_PASSWORD } from '../../server/db/seed.js';

const demo = useDemoApp();

const PNG = Buffer.from('89504e470d0a1a0a0000000d4948445200000001000000010806000000', 'hex');

interface Fixture {
  plan: Awaited<ReturnType<typeof plannedStudy>>;
  openCapture: number;
  finishedCapture: number;
  attachmentId: number;
}

/** A study with an open capture, a finished one and an attachment, made while it was still running. */
async function fixture(title: string): Promise<Fixture> {
  const plan = await plannedStudy(demo.t, title);
  const finishedCapture = await capture(demo.t, plan);
  const openCapture = await capture(demo.t, plan, { open: true });
  const up = await request(demo.t.app)
    .post(`/api/studies/${plan.studyId}/attachments`)
    .set(await demo.auth('engineer'))
    .attach('file', PNG, { filename: 'board.png', contentType: 'image/png' });
  expect(up.status).toBe(201);
  return { plan, openCapture, finishedCapture, attachmentId: up.body.id };
}

/** Every write route that touches a study's data, as [name, request]. */
function writes(f: Fixture) {
  const eng = () => demo.auth('engineer');
  const lead = () => demo.auth('lead');
  return [
    [
      'open a capture',
      async () =>
        request(demo.t.app)
          .post('/api/captures')
          .set(await eng())
          .send(demo.captureBody({ dutId: f.plan.dutId, checkpointId: f.plan.checkpointId })),
    ],
    [
      'add readings to a capture opened earlier',
      async () =>
        request(demo.t.app)
          .post(`/api/captures/${f.openCapture}/readings`)
          .set(await eng())
          .send({ readings: [{ seq: 1000, t: 1000, value: 10_000_000 }] }),
    ],
    [
      'finish a capture',
      async () =>
        request(demo.t.app)
          .post(`/api/captures/${f.openCapture}/finish`)
          .set(await eng()),
    ],
    [
      'finish an already finished capture',
      async () =>
        request(demo.t.app)
          .post(`/api/captures/${f.finishedCapture}/finish`)
          .set(await eng()),
    ],
    [
      "edit a finished capture's notes",
      async () =>
        request(demo.t.app)
          .patch(`/api/captures/${f.finishedCapture}`)
          .set(await eng())
          .send({ notes: 'changed later' }),
    ],
    [
      'add a checkpoint',
      async () =>
        request(demo.t.app)
          .post(`/api/studies/${f.plan.studyId}/checkpoints`)
          .set(await eng())
          .send({ name: 'After bake' }),
    ],
    [
      'add a DUT',
      async () =>
        request(demo.t.app)
          .post(`/api/studies/${f.plan.studyId}/duts`)
          .set(await eng())
          .send({
            label: 'Y10',
            kind: 'crystal',
            nominal: 8e6,
            unit: 'Hz',
            limit: 2,
            limitUnit: 'ppm',
          }),
    ],
    [
      "change a DUT's limit",
      async () =>
        request(demo.t.app)
          .patch(`/api/duts/${f.plan.dutId}`)
          .set(await eng())
          .send({ limit: 5 }),
    ],
    [
      'attach a file to the study',
      async () =>
        request(demo.t.app)
          .post(`/api/studies/${f.plan.studyId}/attachments`)
          .set(await eng())
          .attach('file', PNG, { filename: 'late.png', contentType: 'image/png' }),
    ],
    [
      'attach a file to a checkpoint',
      async () =>
        request(demo.t.app)
          .post(`/api/checkpoints/${f.plan.checkpointId}/attachments`)
          .set(await eng())
          .attach('file', PNG, { filename: 'late.png', contentType: 'image/png' }),
    ],
    [
      'attach a file to a capture',
      async () =>
        request(demo.t.app)
          .post(`/api/captures/${f.finishedCapture}/attachments`)
          .set(await eng())
          .attach('file', PNG, { filename: 'late.png', contentType: 'image/png' }),
    ],
    [
      'delete an attachment',
      async () =>
        request(demo.t.app)
          .delete(`/api/attachments/${f.attachmentId}`)
          .set(await lead()),
    ],
    // Editing with history (issue 13).
    [
      'edit the study',
      async () =>
        request(demo.t.app)
          .patch(`/api/studies/${f.plan.studyId}`)
          .set(await eng())
          .send({ title: 'Renamed while locked' }),
    ],
    [
      'delete the study',
      async () =>
        request(demo.t.app)
          .delete(`/api/studies/${f.plan.studyId}`)
          .set(await eng()),
    ],
    [
      'edit a checkpoint',
      async () =>
        request(demo.t.app)
          .patch(`/api/checkpoints/${f.plan.checkpointId}`)
          .set(await eng())
          .send({ name: 'Renamed' }),
    ],
    [
      'delete a checkpoint',
      async () =>
        request(demo.t.app)
          .delete(`/api/checkpoints/${f.plan.checkpointId}`)
          .set(await eng()),
    ],
    [
      'reorder checkpoints',
      async () =>
        request(demo.t.app)
          .post(`/api/studies/${f.plan.studyId}/checkpoints/order`)
          .set(await eng())
          .send({ ids: [f.plan.checkpointId] }),
    ],
    [
      'archive a DUT',
      async () =>
        request(demo.t.app)
          .patch(`/api/duts/${f.plan.dutId}`)
          .set(await eng())
          .send({ archived: true }),
    ],
    [
      'delete a DUT',
      async () =>
        request(demo.t.app)
          .delete(`/api/duts/${f.plan.dutId}`)
          .set(await eng()),
    ],
    [
      'exclude a capture',
      async () =>
        request(demo.t.app)
          .post(`/api/captures/${f.finishedCapture}/exclude`)
          .set(await lead())
          .send({ reason: 'Locked anyway' }),
    ],
    [
      'include a capture',
      async () =>
        request(demo.t.app)
          .post(`/api/captures/${f.finishedCapture}/include`)
          .set(await lead()),
    ],
    [
      'choose the capture of a cell',
      async () =>
        request(demo.t.app)
          .put(`/api/studies/${f.plan.studyId}/cells`)
          .set(await lead())
          .send({
            dutId: f.plan.dutId,
            checkpointId: f.plan.checkpointId,
            captureId: f.finishedCapture,
          }),
    ],
  ] as const;
}

describe('an approved study is locked on every write route', () => {
  let f: Fixture;
  beforeAll(async () => {
    f = await fixture('Locked by approval');
    // As in the report that opened the issue: the status set directly in the database.
    await demo.t.db.pool.query(`UPDATE studies SET status = 'approved' WHERE id = $1`, [
      f.plan.studyId,
    ]);
  });

  it.each([...Array(writes({} as Fixture).length).keys()])(
    'refuses write #%i with 409 and a clear reason',
    async (i) => {
      const [name, send] = writes(f)[i];
      const res = await send();
      expect(res.status, `${name}: ${JSON.stringify(res.body)}`).toBe(409);
      expect(res.body.error.code).toBe('study-locked');
      expect(res.body.error.message).toMatch(/approved \(revision 1\) and locked/);
      expect(res.body.error.message).toMatch(/reopen/);
    },
  );

  it('changed nothing: the open capture still has its readings and state, the plan is as it was', async () => {
    const c = await request(demo.t.app)
      .get(`/api/captures/${f.openCapture}`)
      .set(await demo.auth('viewer'));
    expect(c.body).toMatchObject({ state: 'open', readingCount: 50 });
    const fin = await request(demo.t.app)
      .get(`/api/captures/${f.finishedCapture}`)
      .set(await demo.auth('viewer'));
    expect(fin.body.notes).toBeNull();
    const s = await request(demo.t.app)
      .get(`/api/studies/${f.plan.studyId}`)
      .set(await demo.auth('viewer'));
    expect(s.body.checkpoints).toHaveLength(1);
    expect(s.body.duts).toHaveLength(1);
    expect(s.body.duts[0].limit).toBe(1);
    const files = await request(demo.t.app)
      .get(`/api/studies/${f.plan.studyId}/attachments`)
      .set(await demo.auth('viewer'));
    expect(files.body.attachments).toHaveLength(1);
  });

  it('still serves reads', async () => {
    expect(
      (
        await request(demo.t.app)
          .get(`/api/studies/${f.plan.studyId}/matrix`)
          .set(await demo.auth('viewer'))
      ).status,
    ).toBe(200);
    expect(
      (
        await request(demo.t.app)
          .get(`/api/captures/${f.finishedCapture}/seal`)
          .set(await demo.auth('viewer'))
      ).status,
    ).toBe(200);
    expect(
      (
        await request(demo.t.app)
          .get(`/api/attachments/${f.attachmentId}`)
          .set(await demo.auth('viewer'))
      ).status,
    ).toBe(200);
  });
});

describe('a study in review is locked too, and a returned one opens again', () => {
  let f: Fixture;
  beforeAll(async () => {
    f = await fixture('Locked by review');
    await request(demo.t.app)
      .post(`/api/captures/${f.openCapture}/finish`)
      .set(await demo.auth('engineer'));
    const sub = await request(demo.t.app)
      .post(`/api/studies/${f.plan.studyId}/submit`)
      .set(await demo.auth('engineer'))
      .send({});
    expect(sub.body.status).toBe('in-review');
  });

  it('refuses a new checkpoint, a new capture and notes while in review', async () => {
    const w = writes(f);
    for (const i of [0, 4, 5]) {
      const res = await w[i][1]();
      expect(res.status).toBe(409);
      expect(res.body.error.message).toMatch(/in review and locked/);
    }
  });

  it('accepts the same writes once a lead returns the study', async () => {
    await request(demo.t.app)
      .post(`/api/studies/${f.plan.studyId}/return`)
      .set(await demo.auth('lead'))
      .send({ comment: 'One more checkpoint.' });
    const w = writes(f);
    expect((await w[5][1]()).status).toBe(201);
    expect((await w[4][1]()).status).toBe(200);
  });
});

describe('a reopened study takes writes again as its next revision', () => {
  it('accepts a new capture after reopen', async () => {
    const f = await fixture('Reopened for more work');
    await request(demo.t.app)
      .post(`/api/captures/${f.openCapture}/finish`)
      .set(await demo.auth('engineer'));
    await request(demo.t.app)
      .post(`/api/studies/${f.plan.studyId}/submit`)
      .set(await demo.auth('engineer'))
      .send({});
    await request(demo.t.app)
      .post(`/api/studies/${f.plan.studyId}/approve`)
      .set(await demo.auth('lead'))
      .send({ password: DEMO_PASSWORD });
    expect((await writes(f)[0][1]()).status).toBe(409);
    await request(demo.t.app)
      .post(`/api/studies/${f.plan.studyId}/reopen`)
      .set(await demo.auth('lead'))
      .send({ reason: 'Second bake requested.' });
    expect((await writes(f)[0][1]()).status).toBe(201);
  });
});
