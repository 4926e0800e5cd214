import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp } from '../helpers/app.js';
import { demoIds } from '../helpers/demo.js';
import { sweepStalledCaptures } from '../../server/services/captureLifecycle.js';
import { stallAfterMs } from '../../shared/protocol/captureLifecycle.js';

// Issue 13, no stranded captures: abort (readings kept, state aborted, reason, audited, out of
// verdicts) and the stall sweep (marked, operator notified, readings revive it).
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

async function newCapture(role: string, checkpointId: number, gateTime = 1) {
  const res = await request(t.app)
    .post('/api/captures')
    .set(await auth(role))
    .send({
      dutId: ids.crystal.id,
      checkpointId,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime,
      ambientC: 23,
    });
  expect(res.status).toBe(201);
  return res.body.id as number;
}

async function addReadings(id: number, role: string, from: number, n: number) {
  const readings = Array.from({ length: n }, (_, i) => ({
    seq: from + i,
    t: from + i,
    value: 16e6 + 0.01 * Math.sin(from + i),
  }));
  return request(t.app)
    .post(`/api/captures/${id}/readings`)
    .set(await auth(role))
    .send({ readings });
}

async function auditOf(id: number, action: string) {
  const { rows } = await t.db.pool.query<{
    actor_id: number | null;
    details: Record<string, unknown>;
  }>(
    "SELECT actor_id, details FROM audit_events WHERE subject_type = 'capture' AND subject_id = $1 AND action = $2 ORDER BY id",
    [id, action],
  );
  return rows;
}

describe('aborting a capture', () => {
  it('keeps the readings, marks it aborted with the reason, audits it and refuses more readings', async () => {
    const id = await newCapture('technician', ids.checkpoints[1]);
    expect((await addReadings(id, 'technician', 0, 25)).status).toBe(200);
    const lead = await request(t.app)
      .post(`/api/captures/${id}/abort`)
      .set(await auth('lead'))
      .send({ reason: 'fixture cable came loose' });
    expect(lead.status).toBe(200);
    expect(lead.body.state).toBe('aborted');
    expect(lead.body.abortReason).toBe('fixture cable came loose');
    expect(lead.body.readingCount).toBe(25);
    expect(lead.body.endedAt).not.toBeNull();
    const { rows } = await t.db.pool.query(
      'SELECT count(*)::int AS n FROM readings WHERE capture_id = $1',
      [id],
    );
    expect(rows[0].n).toBe(25);
    // The kept readings still draw (tiles) and are sealed against later change.
    const chart = await request(t.app)
      .get(`/api/captures/${id}/readings?maxPoints=100`)
      .set(await auth('viewer'));
    expect(chart.status).toBe(200);
    expect(chart.body.readings.length).toBeGreaterThan(0);
    expect(lead.body.sealSha256).toMatch(/^[0-9a-f]{64}$/);

    const events = await auditOf(id, 'capture.abort');
    expect(events).toHaveLength(1);
    expect(events[0].details).toMatchObject({
      reason: 'fixture cable came loose',
      readings: 25,
      state: { from: 'open', to: 'aborted' },
    });

    const more = await addReadings(id, 'technician', 25, 1);
    expect(more.status).toBe(409);
    expect(more.body.error.code).toBe('capture-aborted');
    const finish = await request(t.app)
      .post(`/api/captures/${id}/finish`)
      .set(await auth('technician'))
      .send();
    expect(finish.status).toBe(409);
    const again = await request(t.app)
      .post(`/api/captures/${id}/abort`)
      .set(await auth('lead'))
      .send({ reason: 'twice' });
    expect(again.status).toBe(409);
    const listed = await request(t.app)
      .get(`/api/captures?state=aborted&dutId=${ids.crystal.id}`)
      .set(await auth('viewer'));
    expect(listed.body.captures.map((c: { id: number }) => c.id)).toContain(id);
  });

  it('lets its operator abort, but not another technician or a viewer, and asks for a reason', async () => {
    const id = await newCapture('technician', ids.checkpoints[1]);
    const noReason = await request(t.app)
      .post(`/api/captures/${id}/abort`)
      .set(await auth('technician'))
      .send({});
    expect(noReason.status).toBe(400);
    const blank = await request(t.app)
      .post(`/api/captures/${id}/abort`)
      .set(await auth('technician'))
      .send({ reason: '  ' });
    expect(blank.status).toBe(400);
    const viewer = await request(t.app)
      .post(`/api/captures/${id}/abort`)
      .set(await auth('viewer'))
      .send({ reason: 'not mine' });
    expect(viewer.status).toBe(403);
    const engineerId = await newCapture('engineer', ids.checkpoints[1]);
    const other = await request(t.app)
      .post(`/api/captures/${engineerId}/abort`)
      .set(await auth('technician'))
      .send({ reason: 'not mine' });
    expect(other.status).toBe(403);
    const own = await request(t.app)
      .post(`/api/captures/${id}/abort`)
      .set(await auth('technician'))
      .send({ reason: 'wrong DUT on the fixture' });
    expect(own.status).toBe(200);
    expect(own.body.state).toBe('aborted');
    const missing = await request(t.app)
      .post('/api/captures/999999/abort')
      .set(await auth('lead'))
      .send({ reason: 'gone' });
    expect(missing.status).toBe(404);
  });

  it('keeps an aborted capture out of the matrix and out of every comparison', async () => {
    const base = await newCapture('technician', ids.checkpoints[0]);
    await addReadings(base, 'technician', 0, 30);
    expect(
      (
        await request(t.app)
          .post(`/api/captures/${base}/finish`)
          .set(await auth('technician'))
          .send()
      ).status,
    ).toBe(200);
    const good = await newCapture('technician', ids.checkpoints[1]);
    await addReadings(good, 'technician', 0, 30);
    expect(
      (
        await request(t.app)
          .post(`/api/captures/${good}/finish`)
          .set(await auth('technician'))
          .send()
      ).status,
    ).toBe(200);
    // A later capture of the same cell, aborted: the cell keeps the finished one.
    const aborted = await newCapture('technician', ids.checkpoints[1]);
    await addReadings(aborted, 'technician', 0, 30);
    expect(
      (
        await request(t.app)
          .post(`/api/captures/${aborted}/abort`)
          .set(await auth('lead'))
          .send({ reason: 'bath splashed the board' })
      ).status,
    ).toBe(200);

    const matrix = await request(t.app)
      .get(`/api/studies/${ids.studyId}/matrix`)
      .set(await auth('viewer'));
    expect(matrix.status).toBe(200);
    const row = matrix.body.rows.find((r: { dut: { id: number } }) => r.dut.id === ids.crystal.id);
    const cell = row.cells.find(
      (c: { checkpointId: number }) => c.checkpointId === ids.checkpoints[1],
    );
    expect(cell.capture.id).toBe(good);
    const ids_ = matrix.body.rows.flatMap(
      (r: { cells: Array<{ capture: { id: number } | null }> }) =>
        r.cells.map((c) => c.capture?.id),
    );
    expect(ids_).not.toContain(aborted);

    const cmp = await request(t.app)
      .get(`/api/comparisons?before=${base}&after=${aborted}`)
      .set(await auth('viewer'));
    expect(cmp.status).toBe(409);
    expect(cmp.body.error.code).toBe('capture-aborted');
  });
});

describe('the stall sweep', () => {
  it('is allowed by the capture states’ CHECK constraint, which still refuses unknown states', async () => {
    const { rows } = await t.db.pool.query<{ def: string }>(
      "SELECT pg_get_constraintdef(oid) AS def FROM pg_constraint WHERE conrelid = 'captures'::regclass AND conname = 'captures_state_allowed'",
    );
    expect(rows).toHaveLength(1);
    for (const s of ['open', 'stalled', 'finished', 'aborted'])
      expect(rows[0].def).toContain(`'${s}'`);
    const id = await newCapture('technician', ids.checkpoints[1]);
    await expect(
      t.db.pool.query("UPDATE captures SET state = 'paused' WHERE id = $1", [id]),
    ).rejects.toMatchObject({ code: '23514' });
  });

  it('waits max(gate × 100, 10 min): 10 min for a 1 s gate, 100 × gate beyond that', () => {
    expect(stallAfterMs(1)).toBe(600_000); // issue 13: at least 10 minutes
    expect(stallAfterMs(10)).toBe(1_000_000); // issue 13: 100 gate times of 10 s
    expect(stallAfterMs(0.001)).toBe(600_000);
  });

  it('marks a quiet capture stalled, e-mails its operator once, and readings return it to open', async () => {
    const id = await newCapture('technician', ids.checkpoints[1]);
    await addReadings(id, 'technician', 0, 5);
    const now = Date.now();
    // Nine minutes without readings: still open.
    const early = await sweepStalledCaptures(new Date(now + 9 * 60_000));
    expect(early.stalled).not.toContain(id);
    expect(
      (
        await request(t.app)
          .get(`/api/captures/${id}`)
          .set(await auth('viewer'))
      ).body.state,
    ).toBe('open');

    // The sweep tells the live hub, so watchers see the stall at once.
    const published: Array<[number, string]> = [];
    const later = await sweepStalledCaptures(new Date(now + 11 * 60_000), {
      publishState: (captureId, state) => published.push([captureId, state]),
    });
    expect(later.stalled).toContain(id);
    expect(published).toContainEqual([id, 'stalled']);
    const c = await request(t.app)
      .get(`/api/captures/${id}`)
      .set(await auth('viewer'));
    expect(c.body.state).toBe('stalled');
    expect(c.body.stalledAt).not.toBeNull();
    expect(await auditOf(id, 'capture.stall')).toHaveLength(1);

    const { rows: mail } = await t.db.pool.query<{
      to_address: string;
      subject: string;
      body: string;
    }>(
      "SELECT to_address, subject, body FROM mail_outbox WHERE kind = 'capture-stalled' AND subject LIKE $1",
      [`%capture #${id} %`],
    );
    expect(mail).toHaveLength(1);
    expect(mail[0].to_address).toMatch(/^technician@/);
    expect(mail[0].body).toContain(`/captures/${id}`);
    // A second pass neither marks nor mails again.
    const again = await sweepStalledCaptures(new Date(now + 12 * 60_000));
    expect(again.stalled).not.toContain(id);

    // The stalled capture is listed as such and cannot go into review.
    const list = await request(t.app)
      .get('/api/captures?state=stalled')
      .set(await auth('viewer'));
    expect(list.body.captures.map((x: { id: number }) => x.id)).toContain(id);

    // Readings again: back to open, audited, every reading kept.
    const back = await addReadings(id, 'technician', 5, 3);
    expect(back.status).toBe(200);
    expect(back.body.accepted).toBe(3);
    const revived = await request(t.app)
      .get(`/api/captures/${id}`)
      .set(await auth('viewer'));
    expect(revived.body.state).toBe('open');
    expect(revived.body.readingCount).toBe(8);
    expect(await auditOf(id, 'capture.resume')).toHaveLength(1);
  });

  it('counts the quiet time from the opening when no reading ever came, and scales with a long gate', async () => {
    const none = await newCapture('technician', ids.checkpoints[1]);
    const slow = await newCapture('technician', ids.checkpoints[1], 10);
    await addReadings(slow, 'technician', 0, 2);
    const now = Date.now();
    const at11 = await sweepStalledCaptures(new Date(now + 11 * 60_000));
    expect(at11.stalled).toContain(none);
    // 10 s gate: 1000 s = 16 min 40 s of quiet before it stalls.
    expect(at11.stalled).not.toContain(slow);
    const at17 = await sweepStalledCaptures(new Date(now + 17 * 60_000));
    expect(at17.stalled).toContain(slow);
  });

  it('lets a stalled capture be finished or aborted', async () => {
    const a = await newCapture('technician', ids.checkpoints[1]);
    await addReadings(a, 'technician', 0, 10);
    const b = await newCapture('technician', ids.checkpoints[1]);
    await addReadings(b, 'technician', 0, 10);
    const sweep = await sweepStalledCaptures(new Date(Date.now() + 11 * 60_000));
    expect(sweep.stalled).toEqual(expect.arrayContaining([a, b]));
    const fin = await request(t.app)
      .post(`/api/captures/${a}/finish`)
      .set(await auth('technician'))
      .send();
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    expect(fin.body.readingCount).toBe(10);
    const ab = await request(t.app)
      .post(`/api/captures/${b}/abort`)
      .set(await auth('lead'))
      .send({ reason: 'left over the weekend' });
    expect(ab.status).toBe(200);
    expect((await auditOf(b, 'capture.abort'))[0].details).toMatchObject({
      state: { from: 'stalled', to: 'aborted' },
    });
  });
});
