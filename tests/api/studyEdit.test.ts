import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { QueryTypes } from 'sequelize';
import { useDemoApp } from '../helpers/demoApp.js';
import { plannedStudy } from '../helpers/review.js';
import * as processKinds from '../../server/migrations/20261202-0140-process-kinds-and-editing.js';

// Issue 13 part B: exposures validated per process kind, and editing a study's plan with history
// (edit, reorder, archive, delete, exclude a capture, choose a cell's capture), each audited and
// refused on a locked study.

const demo = useDemoApp();

const NOMINAL = 10_000_000;

/** A finished capture whose readings sit `offsetHz` above nominal (a small ripple, 40 readings). */
async function captureAt(
  dutId: number,
  checkpointId: number,
  offsetHz: number,
  opts: { open?: boolean } = {},
): Promise<number> {
  const readings = Array.from({ length: 40 }, (_, i) => ({
    seq: i,
    t: i,
    value: NOMINAL + offsetHz + 0.001 * Math.sin(i),
  }));
  return demo.recordCapture(readings, { dutId, checkpointId }, opts);
}

async function studyEvents(studyId: number): Promise<
  Array<{
    action: string;
    subjectType: string;
    subjectId: number;
    details: Record<string, unknown>;
  }>
> {
  const res = await request(demo.t.app)
    .get(`/api/studies/${studyId}/audit?limit=100`)
    .set(await demo.auth('viewer'));
  expect(res.status).toBe(200);
  return res.body.events;
}

async function matrixCell(studyId: number, dutId: number, checkpointId: number) {
  const m = await request(demo.t.app)
    .get(`/api/studies/${studyId}/matrix`)
    .set(await demo.auth('viewer'));
  expect(m.status).toBe(200);
  const row = m.body.rows.find((r: { dut: { id: number } }) => r.dut.id === dutId);
  return row?.cells.find((c: { checkpointId: number }) => c.checkpointId === checkpointId);
}

describe('a checkpoint exposure is validated per process kind', () => {
  let studyId: number;
  beforeAll(async () => {
    studyId = (await plannedStudy(demo.t, 'Processes by kind')).studyId;
  });

  const post = async (exposure: unknown) =>
    request(demo.t.app)
      .post(`/api/studies/${studyId}/checkpoints`)
      .set(await demo.auth('engineer'))
      .send({ name: 'After the process', exposure });

  it.each([
    [
      'wash',
      {
        kind: 'wash',
        process: 'Aqueous ultrasonic wash',
        bathKHz: 40,
        temperatureC: 45,
        solvent: 'Aqueous detergent, 5 %',
        minutesPerSide: 3,
        cumulativeMinutes: 6,
      },
    ],
    [
      'aqueous wash without a bath frequency',
      { kind: 'wash', process: 'Inline spray wash', temperatureC: 60, minutesPerSide: 2 },
    ],
    ['reflow', { kind: 'reflow', peakC: 245, secondsAboveLiquidus: 60, passes: 2 }],
    ['bake', { kind: 'bake', temperatureC: 125, hours: 24 }],
    [
      'thermal cycling',
      { kind: 'thermal-cycling', lowC: -40, highC: 85, dwellMinutes: 15, cycles: 100 },
    ],
    [
      'conformal coat',
      { kind: 'conformal-coat', material: 'Acrylic coating', cure: '24 h at room temperature' },
    ],
    [
      'vibration',
      { kind: 'vibration', mode: 'vibration', levelG: 7.7, duration: 1, durationUnit: 'h' },
    ],
    [
      'shock',
      { kind: 'vibration', mode: 'shock', levelG: 1500, duration: 0.5, durationUnit: 'ms' },
    ],
    ['other', { kind: 'other', description: 'Stored 30 days in a dry cabinet' }],
  ])('accepts a %s with its own fields and stores them as given', async (_name, exposure) => {
    const res = await post(exposure);
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.exposure).toEqual(exposure);
  });

  it.each([
    [
      'a reflow with a bath frequency',
      { kind: 'reflow', peakC: 245, passes: 1, bathKHz: 40 },
      'exposure',
      /bathKHz/,
    ],
    [
      'a reflow without its peak temperature',
      { kind: 'reflow', passes: 1 },
      'exposure.peakC',
      /number/,
    ],
    [
      'a reflow with half a pass',
      { kind: 'reflow', peakC: 245, passes: 1.5 },
      'exposure.passes',
      /whole/,
    ],
    ['a bake without hours', { kind: 'bake', temperatureC: 85 }, 'exposure.hours', /number/],
    [
      'a bake given minutes per side',
      { kind: 'bake', temperatureC: 85, hours: 4, minutesPerSide: 0 },
      'exposure',
      /minutesPerSide/,
    ],
    [
      'a cycle whose high is below its low',
      { kind: 'thermal-cycling', lowC: 85, highC: -40, dwellMinutes: 15, cycles: 10 },
      'exposure.highC',
      /above the low/,
    ],
    [
      'a coat without its material',
      { kind: 'conformal-coat', cure: 'UV' },
      'exposure.material',
      /.+/,
    ],
    [
      'a vibration without a unit for its duration',
      { kind: 'vibration', mode: 'vibration', levelG: 5, duration: 2 },
      'exposure.durationUnit',
      /ms, s, min, h/,
    ],
    ['"other" without a description', { kind: 'other' }, 'exposure.description', /.+/],
    [
      'an exposure without a kind',
      { bathKHz: 40 },
      'exposure.kind',
      /must be one of wash, reflow, bake/,
    ],
    ['an unknown kind', { kind: 'sandblast' }, 'exposure.kind', /must be one of/],
  ])('refuses %s with 400 naming the field', async (_name, exposure, path, message) => {
    const res = await post(exposure);
    expect(res.status).toBe(400);
    const detail = (res.body.error.details as Array<{ path: string; message: string }>).find(
      (d) => d.path === path,
    );
    expect(detail, JSON.stringify(res.body.error)).toBeDefined();
    expect(detail!.message).toMatch(message);
  });

  it('turns an exposure stored before process kinds into a wash with its fields kept (the migration)', async () => {
    const qi = demo.t.db.sequelize.getQueryInterface();
    await processKinds.down({ context: qi });
    try {
      await demo.t.db.pool.query(
        `INSERT INTO checkpoints (study_id, name, position, exposure, created_at, updated_at)
         VALUES ($1, 'Old wash', 90, '{"process":"Aqueous ultrasonic wash","bathKHz":40,"minutesPerSide":3}', now(), now())`,
        [studyId],
      );
    } finally {
      await processKinds.up({ context: qi });
    }
    const { rows } = await demo.t.db.pool.query(
      `SELECT exposure FROM checkpoints WHERE study_id = $1 AND name = 'Old wash'`,
      [studyId],
    );
    expect(rows[0].exposure).toEqual({
      kind: 'wash',
      process: 'Aqueous ultrasonic wash',
      bathKHz: 40,
      minutesPerSide: 3,
    });
  });

  it('edits a checkpoint from a wash to a reflow, audited with before and after', async () => {
    const cp = await post({ kind: 'wash', bathKHz: 40, minutesPerSide: 3 });
    const res = await request(demo.t.app)
      .patch(`/api/checkpoints/${cp.body.id}`)
      .set(await demo.auth('engineer'))
      .send({
        name: 'After reflow (2 passes)',
        exposure: { kind: 'reflow', peakC: 250, passes: 2 },
      });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body).toMatchObject({
      name: 'After reflow (2 passes)',
      exposure: { kind: 'reflow', peakC: 250, passes: 2 },
    });
    const ev = (await studyEvents(studyId)).find(
      (e) => e.action === 'checkpoint.update' && e.subjectId === cp.body.id,
    )!;
    expect(ev.details.name).toEqual({ from: 'After the process', to: 'After reflow (2 passes)' });
    expect(ev.details.exposure).toEqual({
      from: { kind: 'wash', bathKHz: 40, minutesPerSide: 3 },
      to: { kind: 'reflow', peakC: 250, passes: 2 },
    });
  });

  it('refuses a patch that mixes the fields of two kinds', async () => {
    const cp = await post({ kind: 'bake', temperatureC: 85, hours: 4 });
    const res = await request(demo.t.app)
      .patch(`/api/checkpoints/${cp.body.id}`)
      .set(await demo.auth('engineer'))
      .send({ exposure: { kind: 'bake', temperatureC: 85, hours: 4, peakC: 245 } });
    expect(res.status).toBe(400);
  });
});

describe('editing, archiving and deleting a plan', () => {
  it('edits a study and audits before → after; a technician may not', async () => {
    const { studyId } = await plannedStudy(demo.t, 'A title with a typo');
    expect(
      (
        await request(demo.t.app)
          .patch(`/api/studies/${studyId}`)
          .set(await demo.auth('technician'))
          .send({ title: 'x' })
      ).status,
    ).toBe(403);
    const res = await request(demo.t.app)
      .patch(`/api/studies/${studyId}`)
      .set(await demo.auth('engineer'))
      .send({ title: 'A title without a typo', process: 'Reflow, profile C' });
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({
      title: 'A title without a typo',
      process: 'Reflow, profile C',
      archived: false,
    });
    const ev = (await studyEvents(studyId)).find((e) => e.action === 'study.update')!;
    expect(ev.details).toMatchObject({
      title: { from: 'A title with a typo', to: 'A title without a typo' },
      process: { from: 'Reflow at 245 °C', to: 'Reflow, profile C' },
    });
    expect(
      (
        await request(demo.t.app)
          .patch(`/api/studies/${studyId}`)
          .set(await demo.auth('engineer'))
          .send({})
      ).status,
    ).toBe(400);
  });

  it('deletes an empty checkpoint and DUT, and keeps their deletion in the study audit', async () => {
    const plan = await plannedStudy(demo.t, 'Deleting mistakes');
    const eng = await demo.auth('engineer');
    const extra = await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/checkpoints`)
      .set(eng)
      .send({ name: 'Planned twice' });
    expect(
      (await request(demo.t.app).delete(`/api/checkpoints/${extra.body.id}`).set(eng)).status,
    ).toBe(204);
    expect((await request(demo.t.app).delete(`/api/duts/${plan.dutId}`).set(eng)).status).toBe(204);
    const s = await request(demo.t.app).get(`/api/studies/${plan.studyId}`).set(eng);
    expect(s.body.checkpoints.map((c: { id: number }) => c.id)).toEqual([plan.checkpointId]);
    expect(s.body.duts).toEqual([]);
    const events = await studyEvents(plan.studyId);
    expect(events.find((e) => e.action === 'checkpoint.delete')).toMatchObject({
      subjectId: extra.body.id,
      details: { before: { name: 'Planned twice' } },
    });
    expect(events.find((e) => e.action === 'dut.delete')).toMatchObject({
      subjectId: plan.dutId,
      details: { before: { label: 'Y9 10 MHz crystal' } },
    });
    expect((await request(demo.t.app).delete(`/api/duts/${plan.dutId}`).set(eng)).status).toBe(404);
  });

  it('refuses to delete a captured checkpoint, DUT or study (409), and archives them instead', async () => {
    const plan = await plannedStudy(demo.t, 'Archive, do not delete');
    const eng = await demo.auth('engineer');
    const later = await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/checkpoints`)
      .set(eng)
      .send({ name: 'After bake', exposure: { kind: 'bake', temperatureC: 85, hours: 4 } });
    const captureId = await captureAt(plan.dutId, plan.checkpointId, 0);
    await captureAt(plan.dutId, later.body.id, 0);
    for (const url of [
      `/api/checkpoints/${plan.checkpointId}`,
      `/api/duts/${plan.dutId}`,
      `/api/studies/${plan.studyId}`,
    ]) {
      const res = await request(demo.t.app).delete(url).set(eng);
      expect(res.status, url).toBe(409);
      expect(res.body.error.code).toBe('has-captures');
      expect(res.body.error.message).toMatch(/archive it instead/);
    }
    const arch = await request(demo.t.app)
      .patch(`/api/checkpoints/${later.body.id}`)
      .set(eng)
      .send({ archived: true });
    expect(arch.status).toBe(200);
    expect(arch.body.archived).toBe(true);
    const m = await request(demo.t.app).get(`/api/studies/${plan.studyId}/matrix`).set(eng);
    expect(m.body.checkpoints.map((c: { id: number }) => c.id)).toEqual([plan.checkpointId]);
    // The capture is still there, and the plan still lists the archived checkpoint as archived.
    expect((await request(demo.t.app).get(`/api/captures/${captureId}`).set(eng)).status).toBe(200);
    const s = await request(demo.t.app).get(`/api/studies/${plan.studyId}`).set(eng);
    expect(s.body.checkpoints.find((c: { id: number }) => c.id === later.body.id).archived).toBe(
      true,
    );

    const dut = await request(demo.t.app)
      .patch(`/api/duts/${plan.dutId}`)
      .set(eng)
      .send({ archived: true });
    expect(dut.status).toBe(200);
    expect(
      (await request(demo.t.app).get(`/api/studies/${plan.studyId}/matrix`).set(eng)).body.rows,
    ).toEqual([]);
    const study = await request(demo.t.app)
      .patch(`/api/studies/${plan.studyId}`)
      .set(eng)
      .send({ archived: true });
    expect(study.body.archived).toBe(true);
    const actions = (await studyEvents(plan.studyId)).map((e) => e.action);
    expect(actions).toEqual(
      expect.arrayContaining(['checkpoint.archive', 'dut.update', 'study.archive']),
    );
    const restore = await request(demo.t.app)
      .patch(`/api/checkpoints/${later.body.id}`)
      .set(eng)
      .send({ archived: false });
    expect(restore.body.archived).toBe(false);
  });

  it('deletes a study made by mistake, with its plan, and records what it held', async () => {
    const plan = await plannedStudy(demo.t, 'Made by mistake');
    const res = await request(demo.t.app)
      .delete(`/api/studies/${plan.studyId}`)
      .set(await demo.auth('engineer'));
    expect(res.status).toBe(204);
    expect(
      (
        await request(demo.t.app)
          .get(`/api/studies/${plan.studyId}`)
          .set(await demo.auth('viewer'))
      ).status,
    ).toBe(404);
    const [ev] = (await demo.t.db.sequelize.query(
      `SELECT details FROM audit_events WHERE action = 'study.delete' AND subject_id = $1`,
      {
        bind: [plan.studyId],
        type: QueryTypes.SELECT,
      },
    )) as Array<{
      details: { before: { title: string; checkpoints: unknown[]; duts: unknown[] } };
    }>;
    expect(ev.details.before).toMatchObject({ title: 'Made by mistake' });
    expect(ev.details.before.checkpoints).toHaveLength(1);
    expect(ev.details.before.duts).toHaveLength(1);
  });

  it('reorders checkpoints when every one is named once, and audits the old and new order', async () => {
    const plan = await plannedStudy(demo.t, 'Reordering');
    const eng = await demo.auth('engineer');
    const b = (
      await request(demo.t.app)
        .post(`/api/studies/${plan.studyId}/checkpoints`)
        .set(eng)
        .send({ name: 'Second' })
    ).body.id as number;
    const c = (
      await request(demo.t.app)
        .post(`/api/studies/${plan.studyId}/checkpoints`)
        .set(eng)
        .send({ name: 'Third' })
    ).body.id as number;
    const a = plan.checkpointId;
    const url = `/api/studies/${plan.studyId}/checkpoints/order`;
    expect(
      (
        await request(demo.t.app)
          .post(url)
          .set(eng)
          .send({ ids: [a, c] })
      ).status,
    ).toBe(400);
    expect(
      (
        await request(demo.t.app)
          .post(url)
          .set(eng)
          .send({ ids: [a, c, c] })
      ).status,
    ).toBe(400);
    const other = await plannedStudy(demo.t, 'Someone else’s');
    const stranger = await request(demo.t.app)
      .post(url)
      .set(eng)
      .send({ ids: [a, b, other.checkpointId] });
    expect(stranger.status).toBe(400);
    expect(stranger.body.error.message).toMatch(/not in this study/);
    const res = await request(demo.t.app)
      .post(url)
      .set(eng)
      .send({ ids: [a, c, b] });
    expect(res.status).toBe(200);
    const s = await request(demo.t.app).get(`/api/studies/${plan.studyId}`).set(eng);
    expect(s.body.checkpoints.map((x: { name: string }) => x.name)).toEqual([
      'Baseline',
      'Third',
      'Second',
    ]);
    const ev = (await studyEvents(plan.studyId)).find((e) => e.action === 'checkpoint.reorder')!;
    expect(ev.details.order).toEqual({ from: [a, b, c], to: [a, c, b] });
  });
});

describe('the evidence: excluding a capture and choosing the capture of a cell', () => {
  let plan: Awaited<ReturnType<typeof plannedStudy>>;
  let after: number;
  let baseOld: number;
  let baseNew: number;
  let afterCapture: number;

  beforeAll(async () => {
    plan = await plannedStudy(demo.t, 'Which capture counts');
    after = (
      await request(demo.t.app)
        .post(`/api/studies/${plan.studyId}/checkpoints`)
        .set(await demo.auth('engineer'))
        .send({ name: 'After reflow', exposure: { kind: 'reflow', peakC: 245, passes: 1 } })
    ).body.id;
    // Two baseline captures: the first on nominal, the second 30 Hz (+3 ppm) high — say a warm board.
    baseOld = await captureAt(plan.dutId, plan.checkpointId, 0);
    baseNew = await captureAt(plan.dutId, plan.checkpointId, 30);
    afterCapture = await captureAt(plan.dutId, after, 0);
  });

  it('uses the latest valid capture by default', async () => {
    const base = await matrixCell(plan.studyId, plan.dutId, plan.checkpointId);
    expect(base.capture).toMatchObject({ id: baseNew, chosen: false });
    const cell = await matrixCell(plan.studyId, plan.dutId, after);
    expect(cell.comparison.before).toBe(baseNew);
    // Δ = 0 − 30 Hz on 10 MHz = −3 ppm (arithmetic, common practice, no source); the ripple is 10⁻⁴ ppm.
    expect(cell.comparison.deltaPpm).toBeCloseTo(-3, 3);
    expect(cell.comparison.verdict).toBe('exceeds');
  });

  it('lets only a lead exclude a capture, with a reason', async () => {
    expect(
      (
        await request(demo.t.app)
          .post(`/api/captures/${baseNew}/exclude`)
          .set(await demo.auth('engineer'))
          .send({ reason: 'Board was warm' })
      ).status,
    ).toBe(403);
    expect(
      (
        await request(demo.t.app)
          .post(`/api/captures/${baseNew}/exclude`)
          .set(await demo.auth('technician'))
          .send({ reason: 'Board was warm' })
      ).status,
    ).toBe(403);
    const none = await request(demo.t.app)
      .post(`/api/captures/${baseNew}/exclude`)
      .set(await demo.auth('lead'))
      .send({});
    expect(none.status).toBe(400);
    expect(none.body.error.details[0].path).toBe('reason');
  });

  it('an excluded capture leaves the matrix: the cell falls back to the one before, and Δ follows', async () => {
    const res = await request(demo.t.app)
      .post(`/api/captures/${baseNew}/exclude`)
      .set(await demo.auth('lead'))
      .send({ reason: 'Board was still warm from the oven' });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body.excluded.reason).toBe('Board was still warm from the oven');
    const base = await matrixCell(plan.studyId, plan.dutId, plan.checkpointId);
    expect(base.capture.id).toBe(baseOld);
    const cell = await matrixCell(plan.studyId, plan.dutId, after);
    expect(cell.comparison.before).toBe(baseOld);
    // Both captures on nominal: Δ ≈ 0 ppm (arithmetic, common practice, no source).
    expect(Math.abs(cell.comparison.deltaPpm)).toBeLessThan(0.01);
    expect(
      (
        await request(demo.t.app)
          .post(`/api/captures/${baseNew}/exclude`)
          .set(await demo.auth('lead'))
          .send({ reason: 'again' })
      ).status,
    ).toBe(409);
    const ev = (await studyEvents(plan.studyId)).find((e) => e.action === 'capture.exclude')!;
    expect(ev).toMatchObject({
      subjectType: 'capture',
      subjectId: baseNew,
      details: {
        reason: 'Board was still warm from the oven',
        excluded: { from: false, to: true },
      },
    });
  });

  it('refuses to choose an excluded capture, and includes it again on request', async () => {
    const chosen = await request(demo.t.app)
      .put(`/api/studies/${plan.studyId}/cells`)
      .set(await demo.auth('lead'))
      .send({ dutId: plan.dutId, checkpointId: plan.checkpointId, captureId: baseNew });
    expect(chosen.status).toBe(409);
    expect(chosen.body.error.code).toBe('capture-excluded');
    const inc = await request(demo.t.app)
      .post(`/api/captures/${baseNew}/include`)
      .set(await demo.auth('lead'));
    expect(inc.status).toBe(200);
    expect((await matrixCell(plan.studyId, plan.dutId, plan.checkpointId)).capture.id).toBe(
      baseNew,
    );
    expect(
      (
        await request(demo.t.app)
          .post(`/api/captures/${baseNew}/include`)
          .set(await demo.auth('lead'))
      ).status,
    ).toBe(409);
    const ev = (await studyEvents(plan.studyId)).find((e) => e.action === 'capture.include')!;
    expect(ev.details).toMatchObject({ excludedBecause: 'Board was still warm from the oven' });
  });

  it('a lead chooses which capture represents a cell, and the matrix compares with it', async () => {
    const body = { dutId: plan.dutId, checkpointId: plan.checkpointId, captureId: baseOld };
    expect(
      (
        await request(demo.t.app)
          .put(`/api/studies/${plan.studyId}/cells`)
          .set(await demo.auth('engineer'))
          .send(body)
      ).status,
    ).toBe(403);
    const res = await request(demo.t.app)
      .put(`/api/studies/${plan.studyId}/cells`)
      .set(await demo.auth('lead'))
      .send(body);
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body).toEqual(body);
    const base = await matrixCell(plan.studyId, plan.dutId, plan.checkpointId);
    expect(base.capture).toMatchObject({ id: baseOld, chosen: true });
    const cell = await matrixCell(plan.studyId, plan.dutId, after);
    expect(cell.comparison.before).toBe(baseOld);
    expect(Math.abs(cell.comparison.deltaPpm)).toBeLessThan(0.01);
    // No reference in these captures: Δ's budget carries the counter timebase's default ±1 ppm
    // (rectangular, DEVELOPERS.md "comparison budget"), so U ≈ 2.3 ppm straddles ±1 ppm.
    expect(cell.comparison.verdict).toBe('inconclusive');
    const list = await request(demo.t.app)
      .get(
        `/api/studies/${plan.studyId}/cells?dutId=${plan.dutId}&checkpointId=${plan.checkpointId}`,
      )
      .set(await demo.auth('viewer'));
    expect(list.status).toBe(200);
    expect(
      list.body.captures.map((c: { id: number; represents: boolean; chosen: boolean }) => [
        c.id,
        c.represents,
        c.chosen,
      ]),
    ).toEqual([
      [baseNew, false, false],
      [baseOld, true, true],
    ]);
    const ev = (await studyEvents(plan.studyId)).find((e) => e.action === 'cell.choose')!;
    expect(ev.details).toMatchObject({
      dutId: plan.dutId,
      checkpointId: plan.checkpointId,
      captureId: { from: null, to: baseOld },
    });
  });

  it('refuses a capture of another cell and a checkpoint of another study', async () => {
    const lead = await demo.auth('lead');
    const wrongCell = await request(demo.t.app)
      .put(`/api/studies/${plan.studyId}/cells`)
      .set(lead)
      .send({ dutId: plan.dutId, checkpointId: plan.checkpointId, captureId: afterCapture });
    expect(wrongCell.status).toBe(400);
    expect(wrongCell.body.error.details[0].path).toBe('captureId');
    const other = await plannedStudy(demo.t, 'Another study');
    const wrongStudy = await request(demo.t.app)
      .put(`/api/studies/${plan.studyId}/cells`)
      .set(lead)
      .send({ dutId: plan.dutId, checkpointId: other.checkpointId, captureId: null });
    expect(wrongStudy.status).toBe(400);
    expect(wrongStudy.body.error.details[0].path).toBe('checkpointId');
  });

  it('excluding the chosen capture clears the choice; null returns a cell to its default', async () => {
    const lead = await demo.auth('lead');
    const ex = await request(demo.t.app)
      .post(`/api/captures/${baseOld}/exclude`)
      .set(lead)
      .send({ reason: 'Wrong fixture' });
    expect(ex.status).toBe(200);
    expect((await matrixCell(plan.studyId, plan.dutId, plan.checkpointId)).capture).toMatchObject({
      id: baseNew,
      chosen: false,
    });
    const ev = (await studyEvents(plan.studyId)).find(
      (e) => e.action === 'capture.exclude' && e.subjectId === baseOld,
    )!;
    expect(ev.details.cellChoiceCleared).toBe(true);
    await request(demo.t.app).post(`/api/captures/${baseOld}/include`).set(lead);
    await request(demo.t.app)
      .put(`/api/studies/${plan.studyId}/cells`)
      .set(lead)
      .send({ dutId: plan.dutId, checkpointId: plan.checkpointId, captureId: baseOld });
    expect((await matrixCell(plan.studyId, plan.dutId, plan.checkpointId)).capture.id).toBe(
      baseOld,
    );
    const back = await request(demo.t.app)
      .put(`/api/studies/${plan.studyId}/cells`)
      .set(lead)
      .send({ dutId: plan.dutId, checkpointId: plan.checkpointId, captureId: null });
    expect(back.body.captureId).toBeNull();
    expect((await matrixCell(plan.studyId, plan.dutId, plan.checkpointId)).capture).toMatchObject({
      id: baseNew,
      chosen: false,
    });
  });

  it('refuses to exclude an open capture', async () => {
    const open = await captureAt(plan.dutId, after, 0, { open: true });
    const res = await request(demo.t.app)
      .post(`/api/captures/${open}/exclude`)
      .set(await demo.auth('lead'))
      .send({ reason: 'Not yet' });
    expect(res.status).toBe(409);
    expect(res.body.error.code).toBe('capture-open');
    await request(demo.t.app)
      .post(`/api/captures/${open}/finish`)
      .set(await demo.auth('technician'));
  });
});

describe('a locked study refuses every edit', () => {
  it('answers 409 study-locked to edit, archive, delete, reorder, exclude and choose', async () => {
    const plan = await plannedStudy(demo.t, 'Locked for editing');
    const captureId = await captureAt(plan.dutId, plan.checkpointId, 0);
    await demo.t.db.pool.query(`UPDATE studies SET status = 'in-review' WHERE id = $1`, [
      plan.studyId,
    ]);
    const eng = await demo.auth('engineer');
    const lead = await demo.auth('lead');
    const tries = [
      request(demo.t.app)
        .patch(`/api/studies/${plan.studyId}`)
        .set(eng)
        .send({ title: 'Changed in review' }),
      request(demo.t.app).patch(`/api/studies/${plan.studyId}`).set(eng).send({ archived: true }),
      request(demo.t.app).delete(`/api/studies/${plan.studyId}`).set(eng),
      request(demo.t.app)
        .patch(`/api/checkpoints/${plan.checkpointId}`)
        .set(eng)
        .send({ name: 'Renamed' }),
      request(demo.t.app).delete(`/api/checkpoints/${plan.checkpointId}`).set(eng),
      request(demo.t.app)
        .post(`/api/studies/${plan.studyId}/checkpoints/order`)
        .set(eng)
        .send({ ids: [plan.checkpointId] }),
      request(demo.t.app).patch(`/api/duts/${plan.dutId}`).set(eng).send({ archived: true }),
      request(demo.t.app).delete(`/api/duts/${plan.dutId}`).set(eng),
      request(demo.t.app)
        .post(`/api/captures/${captureId}/exclude`)
        .set(lead)
        .send({ reason: 'During review' }),
      request(demo.t.app).post(`/api/captures/${captureId}/include`).set(lead),
      request(demo.t.app)
        .put(`/api/studies/${plan.studyId}/cells`)
        .set(lead)
        .send({ dutId: plan.dutId, checkpointId: plan.checkpointId, captureId }),
    ];
    for (const [i, pending] of tries.entries()) {
      const res = await pending;
      expect(res.status, `#${i}: ${JSON.stringify(res.body)}`).toBe(409);
      expect(res.body.error.code).toBe('study-locked');
    }
    const s = await request(demo.t.app).get(`/api/studies/${plan.studyId}`).set(eng);
    expect(s.body).toMatchObject({ title: 'Locked for editing', archived: false });
    expect(s.body.checkpoints[0].name).toBe('Baseline');
  });
});
