import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp } from '../helpers/app.js';
import { as, plannedStudy } from '../helpers/review.js';

// The study report lists each instrument used on its captures with the calibration rule's answer
// (server/services/calibration.ts, as DEVELOPERS.md states it: whole UTC days to the due date;
// past → overdue; up to the 30th day → due soon; away at a calibration lab → away), so the printed
// report can say "Due in 10 days" as the Lab page does.

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => {
  await t.close();
});

/** The calendar date `days` after the UTC day of `at`, as YYYY-MM-DD. */
function dayAfter(at: string, days: number): string {
  const d = new Date(at);
  return new Date(Date.UTC(d.getUTCFullYear(), d.getUTCMonth(), d.getUTCDate() + days))
    .toISOString()
    .slice(0, 10);
}

describe('the calibration of the equipment in the study report', () => {
  it('carries due soon, overdue, away and valid with the days left, as the Lab page reads them', async () => {
    const admin = await as(t, 'admin');
    const eng = await as(t, 'engineer');
    const plan = await plannedStudy(t, 'Report calibration study');
    const today = new Date().toISOString();
    // The due dates as offsets from today (the rule's bands, DEVELOPERS.md "One calibration rule").
    const plans = [
      { name: 'Counter due soon', offset: 10 },
      { name: 'Counter overdue', offset: -3 },
      { name: 'Counter away', offset: 200, away: true },
      { name: 'Counter valid', offset: 45 },
    ];
    // The report uses the latest finished capture of each DUT × checkpoint: one checkpoint each.
    const checkpoints = [plan.checkpointId];
    for (const name of ['After wash', 'After bake', 'After storage']) {
      const cp = await request(t.app)
        .post(`/api/studies/${plan.studyId}/checkpoints`)
        .set(eng)
        .send({ name });
      expect(cp.status).toBe(201);
      checkpoints.push(cp.body.id);
    }
    // A reference three days past the due date of its calibration record, used on the last capture.
    const lead = await as(t, 'lead');
    const reference = await request(t.app).post('/api/references').set(lead).send({
      name: 'Bench OCXO overdue',
      kind: 'ocxo',
      nominalHz: 10e6,
      fractionalOffset: 0,
      standardUncertainty: 5e-10,
    });
    expect(reference.status).toBe(201);
    const referenceId = reference.body.reference.id as number;
    const record = await request(t.app)
      .post(`/api/references/${referenceId}/calibrations`)
      .set(lead)
      .send({
        calibratedOn: dayAfter(today, -368),
        dueOn: dayAfter(today, -3),
        certificate: 'CAL-OCXO-1',
        issuedBy: 'Driftbench test calibration lab',
        fractionalOffset: 1e-10,
        standardUncertainty: 5e-10,
      });
    expect(record.status).toBe(201);
    const ids: number[] = [];
    for (const [n, p] of plans.entries()) {
      const made = await request(t.app)
        .post('/api/instruments')
        .set(admin)
        .send({
          name: p.name,
          kind: 'counter',
          calibrationDue: dayAfter(today, p.offset),
          notes: 'Kept on the lab shelf, not for the record.',
        });
      expect(made.status).toBe(201);
      ids.push(made.body.instrument.id);
      if (p.away) {
        const away = await request(t.app)
          .post(`/api/instruments/${made.body.instrument.id}/away`)
          .set(admin)
          .send({});
        expect(away.status).toBe(200);
      }
      const c = await request(t.app)
        .post('/api/captures')
        .set(eng)
        .send({
          dutId: plan.dutId,
          checkpointId: checkpoints[n],
          quantity: 'frequency',
          unit: 'Hz',
          gateTime: 1,
          instrumentId: made.body.instrument.id,
          ...(n === plans.length - 1 ? { referenceId } : {}),
        });
      expect(c.status).toBe(201);
      const readings = Array.from({ length: 20 }, (_, seq) => ({
        seq,
        t: seq,
        value: 10_000_000 + 0.001 * Math.sin(seq),
      }));
      await request(t.app).post(`/api/captures/${c.body.id}/readings`).set(eng).send({ readings });
      expect((await request(t.app).post(`/api/captures/${c.body.id}/finish`).set(eng)).status).toBe(
        200,
      );
    }

    const report = await request(t.app).get(`/api/studies/${plan.studyId}/report`).set(eng);
    expect(report.status).toBe(200);
    const byId = new Map(
      (report.body.instruments as Array<{ id: number }>).map((i) => [i.id, i] as const),
    );
    // Days counted from the report's own day, so a run across midnight still agrees.
    const generated = report.body.generatedAt as string;
    const daysFrom = (offset: number) =>
      Math.round(
        (Date.parse(dayAfter(today, offset)) - Date.parse(dayAfter(generated, 0))) / 86_400_000,
      );
    expect(byId.get(ids[0])).toMatchObject({
      calibrationState: 'due-soon',
      calibration: { state: 'due-soon', daysLeft: daysFrom(10), needsAttention: true },
    });
    expect(byId.get(ids[1])).toMatchObject({
      calibrationState: 'overdue',
      calibration: { state: 'overdue', daysLeft: daysFrom(-3), needsAttention: true },
    });
    expect(byId.get(ids[2])).toMatchObject({
      calibrationState: 'away',
      calibration: { state: 'away', needsAttention: true },
    });
    expect(byId.get(ids[3])).toMatchObject({
      calibrationState: 'valid',
      calibration: { state: 'valid', daysLeft: daysFrom(45), needsAttention: false },
    });
    // The record carries the instrument without the lab's notes, link profile or standing.
    expect(Object.keys(byId.get(ids[0])!).sort()).toEqual(
      [
        'calibration',
        'calibrationDue',
        'calibrationState',
        'id',
        'kind',
        'maker',
        'model',
        'name',
        'serial',
      ].sort(),
    );
    expect(report.body.references).toHaveLength(1);
    expect(report.body.references[0]).toMatchObject({
      id: referenceId,
      calibrationDue: dayAfter(today, -3),
      calibration: { state: 'overdue', daysLeft: daysFrom(-3), needsAttention: true },
    });
  });
});
