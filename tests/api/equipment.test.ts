// The lab's equipment (issue 14): calibration records kept as history, one calibration rule for
// the lists, the dashboard and the bench, away at the calibration lab, retired, the lab's reference.
import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { AuditEvent } from '../../server/models/index.js';
import { calibrationStatus } from '../../server/services/calibration.js';
import { calibrationWords } from '../../shared/protocol/equipment.js';

const demo = useDemoApp();
const { auth } = demo;

/** Today + n days as YYYY-MM-DD (UTC), the calendar the rule counts in. */
function day(n: number, from = new Date()): string {
  return new Date(Date.UTC(from.getUTCFullYear(), from.getUTCMonth(), from.getUTCDate() + n))
    .toISOString()
    .slice(0, 10);
}

interface Item {
  id: number;
  name: string;
  retiredAt: string | null;
  calibration: { state: string; daysLeft: number | null; needsAttention: boolean };
}

async function lists() {
  const viewer = await auth('viewer');
  const instruments = (await request(demo.t.app).get('/api/instruments').set(viewer)).body
    .instruments as Item[];
  const references = (await request(demo.t.app).get('/api/references').set(viewer)).body
    .references as Item[];
  const dashboard = (await request(demo.t.app).get('/api/dashboard').set(viewer)).body as {
    calibration: Array<{ subject: string; id: number; name: string; state: string }>;
  };
  return { instruments, references, dashboard };
}

describe('the one calibration rule', () => {
  const now = new Date('2026-12-02T22:30:00Z');
  // Common practice, no source: a 30-day warning window; the 30th day is still "due soon".
  it.each([
    ['2027-01-01', 'due-soon', 30],
    ['2027-01-02', 'valid', 31],
    ['2026-12-02', 'due-soon', 0],
    ['2026-12-01', 'overdue', -1],
    ['2026-11-27', 'overdue', -5],
  ])('counts whole UTC days: due %s on 2 Dec 2026 is %s (%i days left)', (due, state, daysLeft) => {
    const s = calibrationStatus({ calibrationDue: due }, now);
    expect(s.state).toBe(state);
    expect(s.daysLeft).toBe(daysLeft);
  });

  it('reads "away" whatever the due date, and "no due date" without one', () => {
    expect(
      calibrationStatus({ calibrationDue: '2020-01-01', awaySince: '2026-11-30' }, now).state,
    ).toBe('away');
    expect(calibrationStatus({ calibrationDue: null }, now)).toMatchObject({
      state: 'no-due-date',
      needsAttention: false,
    });
  });

  it('words each state one way only', () => {
    expect(calibrationWords({ state: 'valid', daysLeft: 90 })).toBe('Calibration valid');
    expect(calibrationWords({ state: 'away', daysLeft: 3 })).toBe('Away for calibration');
    expect(calibrationWords({ state: 'overdue', daysLeft: -5 })).toBe('Overdue by 5 days');
    expect(calibrationWords({ state: 'due-soon', daysLeft: 1 })).toBe('Due in 1 day');
    expect(calibrationWords({ state: 'due-soon', daysLeft: 0 })).toBe('Due today');
  });

  it('is the one the API answers: the 30th day is due soon and listed, the 31st valid and not', async () => {
    const admin = await auth('admin');
    const at30 = await request(demo.t.app)
      .post('/api/instruments')
      .set(admin)
      .send({ name: 'Counter D-30', kind: 'counter', calibrationDue: day(30) });
    const at31 = await request(demo.t.app)
      .post('/api/instruments')
      .set(admin)
      .send({ name: 'Counter D-31', kind: 'counter', calibrationDue: day(31) });
    expect(at30.body.instrument.calibration).toMatchObject({
      state: 'due-soon',
      daysLeft: 30,
      needsAttention: true,
    });
    expect(at31.body.instrument.calibration).toMatchObject({
      state: 'valid',
      daysLeft: 31,
      needsAttention: false,
    });
    const { dashboard } = await lists();
    const names = dashboard.calibration.map((c) => c.name);
    expect(names).toContain('Counter D-30');
    expect(names).not.toContain('Counter D-31');
  });

  it('makes the lab lists and the dashboard count the same equipment', async () => {
    const { instruments, references, dashboard } = await lists();
    const counted = [...instruments, ...references]
      .filter((i) => !i.retiredAt && i.calibration.needsAttention)
      .map((i) => i.name)
      .sort();
    expect(dashboard.calibration.map((c) => c.name).sort()).toEqual(counted);
    // The SPI bridge has no due date: shown as such, never counted.
    const bridge = instruments.find((i) => i.name === 'SPI bridge B-1')!;
    expect(bridge.calibration).toMatchObject({ state: 'no-due-date', needsAttention: false });
    expect(counted).not.toContain('SPI bridge B-1');
  });
});

describe('calibration records', () => {
  let thermometerId: number;
  beforeAll(async () => {
    const { instruments } = await lists();
    thermometerId = instruments.find((i) => i.name === 'Bench thermometer T-1')!.id;
  });

  it('starts from the demo lab: the thermometer is overdue by 5 days with one certificate on file', async () => {
    const res = await request(demo.t.app)
      .get(`/api/instruments/${thermometerId}`)
      .set(await auth('viewer'));
    expect(res.body.instrument).toMatchObject({
      kind: 'thermometer',
      calibration: { state: 'overdue', daysLeft: -5 },
    });
    const history = await request(demo.t.app)
      .get(`/api/instruments/${thermometerId}/calibrations`)
      .set(await auth('technician'));
    expect(history.status).toBe(200);
    expect(history.body.calibrations).toHaveLength(1);
    expect(history.body.calibrations[0]).toMatchObject({
      subject: 'instrument',
      subjectId: thermometerId,
      certificate: 'DBX-T-0457',
    });
  });

  it('records a new calibration: overdue clears, the dashboard drops it, the history keeps both and the audit says so', async () => {
    const body = {
      calibratedOn: day(-1),
      dueOn: day(364),
      certificate: 'DBX-T-0502',
      issuedBy: 'Driftbench demo calibration lab',
      uncertainty: '±0.05 °C (k = 2)',
    };
    const res = await request(demo.t.app)
      .post(`/api/instruments/${thermometerId}/calibrations`)
      .set(await auth('admin'))
      .send(body);
    expect(res.status).toBe(201);
    expect(res.body.calibration).toMatchObject({
      ...body,
      recordedBy: 'Ada Admin',
      fractionalOffset: null,
    });
    expect(res.body.instrument).toMatchObject({
      calibrationDue: day(364),
      calibration: { state: 'valid', daysLeft: 364 },
    });

    const { dashboard } = await lists();
    expect(dashboard.calibration.map((c) => c.name)).not.toContain('Bench thermometer T-1');
    const history = (
      await request(demo.t.app)
        .get(`/api/instruments/${thermometerId}/calibrations`)
        .set(await auth('viewer'))
    ).body.calibrations;
    expect(history.map((c: { certificate: string }) => c.certificate)).toEqual([
      'DBX-T-0502',
      'DBX-T-0457',
    ]);
    const events = await AuditEvent.findAll({
      where: { action: 'instrument.calibration.record', subjectId: thermometerId },
    });
    expect(events).toHaveLength(1);
    expect(events[0].details).toMatchObject({
      certificate: 'DBX-T-0502',
      current: true,
      changes: { calibrationDue: { to: day(364) } },
    });
  });

  it('keeps an older certificate entered late as history without moving the current due date', async () => {
    const res = await request(demo.t.app)
      .post(`/api/instruments/${thermometerId}/calibrations`)
      .set(await auth('admin'))
      .send({
        calibratedOn: day(-800),
        dueOn: day(-435),
        certificate: 'DBX-T-0311',
        issuedBy: 'Driftbench demo calibration lab',
      });
    expect(res.status).toBe(201);
    expect(res.body.instrument.calibrationDue).toBe(day(364));
    const history = (
      await request(demo.t.app)
        .get(`/api/instruments/${thermometerId}/calibrations`)
        .set(await auth('viewer'))
    ).body.calibrations;
    expect(history.map((c: { certificate: string }) => c.certificate)).toEqual([
      'DBX-T-0502',
      'DBX-T-0457',
      'DBX-T-0311',
    ]);
  });

  it('never overwrites a record: the database refuses an UPDATE', async () => {
    await expect(
      demo.t.db.pool.query(
        `UPDATE calibration_records SET certificate = 'forged' WHERE instrument_id = $1`,
        [thermometerId],
      ),
    ).rejects.toThrow(/calibration records are history/);
  });

  it.each([
    [
      { calibratedOn: day(-1), dueOn: day(-2), certificate: 'X', issuedBy: 'Lab' },
      'dueOn',
      'after the calibration date',
    ],
    [{ calibratedOn: day(2), certificate: 'X', issuedBy: 'Lab' }, 'calibratedOn', 'future'],
    [{ calibratedOn: day(-1), certificate: ' ', issuedBy: 'Lab' }, 'certificate', 'is required'],
    [
      { calibratedOn: '2026-02-30', certificate: 'X', issuedBy: 'Lab' },
      'calibratedOn',
      'not a calendar date',
    ],
    [{ certificate: 'X', issuedBy: 'Lab' }, 'calibratedOn', ''],
  ])(
    'refuses an incomplete or impossible record with 400 naming the field (%#)',
    async (body, field, words) => {
      const res = await request(demo.t.app)
        .post(`/api/instruments/${thermometerId}/calibrations`)
        .set(await auth('admin'))
        .send(body);
      expect(res.status).toBe(400);
      const detail = res.body.error.details.find((d: { path: string }) => d.path === field);
      expect(detail?.message).toContain(words);
    },
  );

  it('leaves instruments to admins: a lead may not record an instrument calibration (403)', async () => {
    const res = await request(demo.t.app)
      .post(`/api/instruments/${thermometerId}/calibrations`)
      .set(await auth('lead'))
      .send({ calibratedOn: day(-1), certificate: 'X', issuedBy: 'Lab' });
    expect(res.status).toBe(403);
  });

  it('answers 404 for the history of an instrument that does not exist', async () => {
    expect(
      (
        await request(demo.t.app)
          .get('/api/instruments/99999/calibrations')
          .set(await auth('viewer'))
      ).status,
    ).toBe(404);
  });
});

describe('away for calibration, retired, back in service', () => {
  let id: number;
  beforeAll(async () => {
    const res = await request(demo.t.app)
      .post('/api/instruments')
      .set(await auth('admin'))
      .send({ name: 'Counter A-1', kind: 'counter', calibrationDue: day(120) });
    id = res.body.instrument.id;
  });

  it('reads "away" once sent to the calibration lab, is listed on the dashboard, and cannot be sent twice', async () => {
    const res = await request(demo.t.app)
      .post(`/api/instruments/${id}/away`)
      .set(await auth('admin'))
      .send({});
    expect(res.status).toBe(200);
    expect(res.body.instrument).toMatchObject({
      awaySince: day(0),
      calibration: { state: 'away', needsAttention: true },
    });
    expect((await lists()).dashboard.calibration).toContainEqual(
      expect.objectContaining({ name: 'Counter A-1', state: 'away' }),
    );
    const again = await request(demo.t.app)
      .post(`/api/instruments/${id}/away`)
      .set(await auth('admin'))
      .send({});
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('equipment-away');
  });

  it('comes back with its new calibration recorded', async () => {
    const res = await request(demo.t.app)
      .post(`/api/instruments/${id}/calibrations`)
      .set(await auth('admin'))
      .send({
        calibratedOn: day(0),
        dueOn: day(365),
        certificate: 'DBX-C-3001',
        issuedBy: 'Driftbench demo calibration lab',
      });
    expect(res.status).toBe(201);
    expect(res.body.instrument).toMatchObject({ awaySince: null, calibration: { state: 'valid' } });
  });

  it('retires with a reason (required), leaves the dashboard, refuses new records, and returns to service', async () => {
    const noReason = await request(demo.t.app)
      .post(`/api/instruments/${id}/retire`)
      .set(await auth('admin'))
      .send({});
    expect(noReason.status).toBe(400);
    await request(demo.t.app)
      .post(`/api/instruments/${id}/away`)
      .set(await auth('admin'))
      .send({ sentOn: day(-1) });
    const res = await request(demo.t.app)
      .post(`/api/instruments/${id}/retire`)
      .set(await auth('admin'))
      .send({ reason: 'Timebase failed; replaced by C-4.' });
    expect(res.status).toBe(200);
    expect(res.body.instrument.retiredAt).not.toBeNull();
    expect(res.body.instrument.retiredReason).toBe('Timebase failed; replaced by C-4.');
    expect((await lists()).dashboard.calibration.map((c) => c.name)).not.toContain('Counter A-1');

    const record = await request(demo.t.app)
      .post(`/api/instruments/${id}/calibrations`)
      .set(await auth('admin'))
      .send({ calibratedOn: day(0), certificate: 'X', issuedBy: 'Lab' });
    expect(record.status).toBe(409);
    expect(record.body.error.code).toBe('equipment-retired');
    expect(
      (
        await request(demo.t.app)
          .post(`/api/instruments/${id}/retire`)
          .set(await auth('admin'))
          .send({ reason: 'again' })
      ).status,
    ).toBe(409);

    // A retired instrument records no new capture.
    const study = (
      await request(demo.t.app)
        .get('/api/studies')
        .set(await auth('engineer'))
    ).body.studies[0];
    const plan = (
      await request(demo.t.app)
        .get(`/api/studies/${study.id}`)
        .set(await auth('engineer'))
    ).body;
    const capture = await request(demo.t.app)
      .post('/api/captures')
      .set(await auth('engineer'))
      .send(
        demo.captureBody({
          dutId: plan.duts[0].id,
          checkpointId: plan.checkpoints[0].id,
          instrumentId: id,
          ambientC: 23,
        }),
      );
    expect(capture.status).toBe(409);
    expect(capture.body.error.code).toBe('equipment-retired');

    const back = await request(demo.t.app)
      .post(`/api/instruments/${id}/reinstate`)
      .set(await auth('admin'))
      .send({});
    expect(back.status).toBe(200);
    expect(back.body.instrument).toMatchObject({
      retiredAt: null,
      awaySince: null,
      calibration: { state: 'valid' },
    });
    expect(
      (
        await request(demo.t.app)
          .post(`/api/instruments/${id}/reinstate`)
          .set(await auth('admin'))
          .send({})
      ).status,
    ).toBe(409);
    expect(
      await AuditEvent.count({
        where: {
          subjectType: 'instrument',
          subjectId: id,
          action: ['instrument.away', 'instrument.retire', 'instrument.reinstate'],
        },
      }),
    ).toBe(4);
  });
});

describe('references', () => {
  let gpsId: number;
  let ocxoId: number;
  beforeAll(async () => {
    gpsId = (await lists()).references[0].id;
    const res = await request(demo.t.app)
      .post('/api/references')
      .set(await auth('lead'))
      .send({
        name: 'Bench OCXO R-2',
        kind: 'ocxo',
        nominalHz: 10e6,
        fractionalOffset: 0,
        standardUncertainty: 5e-10,
      });
    ocxoId = res.body.reference.id;
  });

  it('starts with the demo lab’s GPS reference as the lab’s reference, due in 355 days', async () => {
    const res = await request(demo.t.app)
      .get(`/api/references/${gpsId}`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.body.reference).toMatchObject({
      labDefault: true,
      calibration: { state: 'valid', daysLeft: 355 },
    });
  });

  it('lets a lead record a reference calibration; its offset and uncertainty become the reference’s record', async () => {
    const missing = await request(demo.t.app)
      .post(`/api/references/${ocxoId}/calibrations`)
      .set(await auth('lead'))
      .send({
        calibratedOn: day(-2),
        dueOn: day(180),
        certificate: 'DBX-R-0777',
        issuedBy: 'Driftbench demo calibration lab',
      });
    expect(missing.status).toBe(400);
    expect(missing.body.error.details.map((d: { path: string }) => d.path)).toEqual([
      'fractionalOffset',
      'standardUncertainty',
    ]);

    const res = await request(demo.t.app)
      .post(`/api/references/${ocxoId}/calibrations`)
      .set(await auth('lead'))
      .send({
        calibratedOn: day(-2),
        dueOn: day(180),
        certificate: 'DBX-R-0777',
        issuedBy: 'Driftbench demo calibration lab',
        fractionalOffset: 3.1e-9,
        standardUncertainty: 2e-10,
      });
    expect(res.status).toBe(201);
    expect(res.body.reference).toMatchObject({
      fractionalOffset: 3.1e-9,
      standardUncertainty: 2e-10,
      verifiedAt: day(-2),
      verifiedBy: 'Driftbench demo calibration lab, certificate DBX-R-0777',
      calibrationDue: day(180),
      calibration: { state: 'valid' },
    });
    const history = await request(demo.t.app)
      .get(`/api/references/${ocxoId}/calibrations`)
      .set(await auth('viewer'));
    expect(history.body.calibrations).toHaveLength(1);
    expect(history.body.calibrations[0]).toMatchObject({
      subject: 'reference',
      fractionalOffset: 3.1e-9,
    });
  });

  it('keeps one lab reference: choosing another moves the mark, and retiring it clears it', async () => {
    const res = await request(demo.t.app)
      .post(`/api/references/${ocxoId}/lab-default`)
      .set(await auth('lead'))
      .send({});
    expect(res.status).toBe(200);
    expect(res.body.reference.labDefault).toBe(true);
    const { references } = await lists();
    expect(
      references
        .filter((r) => (r as unknown as { labDefault: boolean }).labDefault)
        .map((r) => r.id),
    ).toEqual([ocxoId]);

    const retired = await request(demo.t.app)
      .post(`/api/references/${ocxoId}/retire`)
      .set(await auth('lead'))
      .send({ reason: 'Sold.' });
    expect(retired.body.reference).toMatchObject({ labDefault: false });
    const refused = await request(demo.t.app)
      .post(`/api/references/${ocxoId}/lab-default`)
      .set(await auth('lead'))
      .send({});
    expect(refused.status).toBe(409);
    expect(
      (
        await request(demo.t.app)
          .post(`/api/references/${gpsId}/lab-default`)
          .set(await auth('engineer'))
          .send({})
      ).status,
    ).toBe(403);
  });
});
