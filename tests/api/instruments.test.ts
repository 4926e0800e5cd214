import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { AuditEvent } from '../../server/models/index.js';
import { linkPreset } from '../../shared/protocol/linkProfile.js';

const demo = useDemoApp();
let counterId: number;
const { auth } = demo;

beforeAll(async () => {
  const list = await request(demo.t.app)
    .get('/api/instruments')
    .set(await auth('viewer'));
  counterId = list.body.instruments.find((i: { name: string }) => i.name === 'Counter C-1').id;
});

const profilePath = () => `/api/instruments/${counterId}/link-profile`;

describe('link profiles stored per instrument', () => {
  it('reads one instrument, with no link profile at first', async () => {
    const res = await request(demo.t.app)
      .get(`/api/instruments/${counterId}`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.body.instrument).toMatchObject({
      id: counterId,
      name: 'Counter C-1',
      kind: 'counter',
      linkProfile: null,
    });
    expect(res.body.instrument.calibrationState).toBe('valid');
  });

  it('saves a profile for a lead, reads it back and audits it', async () => {
    const profile = {
      ...linkPreset('scpi-counter'),
      name: 'C-1 over USB',
      initCommands: [':SENS:FREQ:GATE:TIME 1'],
    };
    const res = await request(demo.t.app)
      .put(profilePath())
      .set(await auth('lead'))
      .send(profile);
    expect(res.status).toBe(200);
    expect(res.body.linkProfile).toEqual(profile);

    const read = await request(demo.t.app)
      .get(`/api/instruments/${counterId}`)
      .set(await auth('technician'));
    expect(read.body.instrument.linkProfile).toEqual(profile);
    const listed = await request(demo.t.app)
      .get('/api/instruments')
      .set(await auth('viewer'));
    expect(
      listed.body.instruments.find((i: { id: number }) => i.id === counterId).linkProfile.name,
    ).toBe('C-1 over USB');

    const events = await AuditEvent.findAll({
      where: { action: 'instrument.link-profile.set', subjectId: counterId },
    });
    expect(events).toHaveLength(1);
    expect(events[0].details).toMatchObject({ name: 'C-1 over USB', mode: 'query' });
  });

  it('replaces a profile with a simulator profile for the admin', async () => {
    const profile = {
      ...linkPreset('talk-counter'),
      kind: 'simulator',
      simulator: { path: '/sim/counter', params: { mode: 'talk', preset: 'osc-25m' } },
    };
    const res = await request(demo.t.app)
      .put(profilePath())
      .set(await auth('admin'))
      .send(profile);
    expect(res.status).toBe(200);
    expect(res.body.linkProfile.simulator.params.preset).toBe('osc-25m');
    expect(
      await AuditEvent.count({
        where: { action: 'instrument.link-profile.replace', subjectId: counterId },
      }),
    ).toBe(1);
  });

  it.each(['viewer', 'technician', 'engineer'])(
    'refuses to let the %s save or clear a profile (403)',
    async (role) => {
      const put = await request(demo.t.app)
        .put(profilePath())
        .set(await auth(role))
        .send(linkPreset('scpi-counter'));
      expect(put.status).toBe(403);
      expect(put.body.error.code).toBe('forbidden');
      const del = await request(demo.t.app)
        .delete(profilePath())
        .set(await auth(role));
      expect(del.status).toBe(403);
    },
  );

  it.each([
    [{ serial: { ...linkPreset('scpi-counter').serial, baudRate: 0 } }, 'serial.baudRate'],
    [{ mode: 'shout' }, 'mode'],
    [{ mode: 'query', queryCommand: '  ' }, 'queryCommand'],
    [{ parseRule: 'hex-spi' }, 'hexSpi'],
    [{ kind: 'simulator' }, 'simulator'],
    [{ terminator: 'CRLFCR' }, 'terminator'],
    [{ name: '' }, 'name'],
  ])('refuses a bad profile with 400 naming the field (%#)', async (change, field) => {
    const res = await request(demo.t.app)
      .put(profilePath())
      .set(await auth('lead'))
      .send({ ...linkPreset('scpi-counter'), ...change });
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation');
    expect(res.body.error.details.map((d: { path: string }) => d.path)).toContain(field);
    expect(res.body.error.message).toContain(field);
  });

  it('clears a profile, and clearing again is harmless', async () => {
    const res = await request(demo.t.app)
      .delete(profilePath())
      .set(await auth('lead'));
    expect(res.status).toBe(204);
    const read = await request(demo.t.app)
      .get(`/api/instruments/${counterId}`)
      .set(await auth('viewer'));
    expect(read.body.instrument.linkProfile).toBeNull();
    expect(
      await AuditEvent.count({
        where: { action: 'instrument.link-profile.clear', subjectId: counterId },
      }),
    ).toBe(1);
    expect(
      (
        await request(demo.t.app)
          .delete(profilePath())
          .set(await auth('lead'))
      ).status,
    ).toBe(204);
    expect(
      await AuditEvent.count({
        where: { action: 'instrument.link-profile.clear', subjectId: counterId },
      }),
    ).toBe(1);
  });

  it('answers 404 for a missing instrument and 400 for a bad id', async () => {
    expect(
      (
        await request(demo.t.app)
          .get('/api/instruments/99999')
          .set(await auth('viewer'))
      ).status,
    ).toBe(404);
    const put = await request(demo.t.app)
      .put('/api/instruments/99999/link-profile')
      .set(await auth('admin'))
      .send(linkPreset('spi-bridge'));
    expect(put.status).toBe(404);
    expect(put.body.error.code).toBe('not-found');
    expect(
      (
        await request(demo.t.app)
          .delete('/api/instruments/99999/link-profile')
          .set(await auth('admin'))
      ).status,
    ).toBe(404);
    expect(
      (
        await request(demo.t.app)
          .get('/api/instruments/abc')
          .set(await auth('viewer'))
      ).status,
    ).toBe(400);
  });
});

describe('registering instruments', () => {
  const counter = {
    name: 'Counter C-2',
    kind: 'counter',
    maker: 'Kestrel Bay metrology',
    model: 'Reciprocal counter',
    serial: 'KB-CNT-0002',
    calibrationDue: '2031-04-30',
    notes: 'Bought for the second bench.',
  };

  it('registers a counter for an admin, and it joins the lab list', async () => {
    const res = await request(demo.t.app)
      .post('/api/instruments')
      .set(await auth('admin'))
      .send(counter);
    expect(res.status).toBe(201);
    expect(res.body.instrument).toMatchObject({
      ...counter,
      linkProfile: null,
      calibrationState: 'valid',
    });
    const listed = await request(demo.t.app)
      .get('/api/instruments')
      .set(await auth('viewer'));
    expect(listed.body.instruments.map((i: { name: string }) => i.name)).toContain('Counter C-2');
    expect(
      await AuditEvent.count({
        where: { action: 'instrument.create', subjectId: res.body.instrument.id },
      }),
    ).toBe(1);
  });

  it('registers with only a name and a kind, storing empty texts as none', async () => {
    const res = await request(demo.t.app)
      .post('/api/instruments')
      .set(await auth('admin'))
      .send({ name: 'Spare bridge', kind: 'spi-bridge', maker: '  ' });
    expect(res.status).toBe(201);
    expect(res.body.instrument).toMatchObject({
      maker: null,
      model: null,
      calibrationDue: null,
      calibrationState: 'no-due-date',
    });
  });

  it.each([
    [{ ...counter, name: '' }, 'name', 'is required'],
    [{ ...counter, kind: 'oscilloscope' }, 'kind', 'must be one of'],
    [{ ...counter, calibrationDue: '30/04/2031' }, 'calibrationDue', 'YYYY-MM-DD'],
    [{ ...counter, calibrationDue: '2031-02-30' }, 'calibrationDue', 'not a calendar date'],
    [{ ...counter, colour: 'blue' }, 'body', 'Unrecognized key'],
  ])('refuses an invalid new instrument with a clear message (%#)', async (body, field, words) => {
    const res = await request(demo.t.app)
      .post('/api/instruments')
      .set(await auth('admin'))
      .send(body);
    expect(res.status).toBe(400);
    const detail = res.body.error.details.find((d: { path: string }) => d.path === field);
    expect(detail?.message).toContain(words);
  });

  it.each(['lead', 'engineer'])(
    'refuses registration to a %s (403: instruments are the admins’)',
    async (role) => {
      expect(
        (
          await request(demo.t.app)
            .post('/api/instruments')
            .set(await auth(role))
            .send(counter)
        ).status,
      ).toBe(403);
    },
  );

  it('patches the calibration date and notes, validating them, and audits the change', async () => {
    const created = await request(demo.t.app)
      .post('/api/instruments')
      .set(await auth('admin'))
      .send({ name: 'Counter C-3', kind: 'counter' });
    const id = created.body.instrument.id;
    const res = await request(demo.t.app)
      .patch(`/api/instruments/${id}`)
      .set(await auth('admin'))
      .send({ calibrationDue: '2030-01-15', notes: 'Back from calibration.' });
    expect(res.status).toBe(200);
    expect(res.body.instrument).toMatchObject({
      name: 'Counter C-3',
      calibrationDue: '2030-01-15',
      notes: 'Back from calibration.',
    });
    const events = await AuditEvent.findAll({
      where: { action: 'instrument.update', subjectId: id },
    });
    expect(events[0].details).toMatchObject({ calibrationDue: { from: null, to: '2030-01-15' } });

    const bad = await request(demo.t.app)
      .patch(`/api/instruments/${id}`)
      .set(await auth('admin'))
      .send({ calibrationDue: 'soon' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/^calibrationDue: must be a date as YYYY-MM-DD/);
    expect(
      (
        await request(demo.t.app)
          .patch(`/api/instruments/${id}`)
          .set(await auth('admin'))
          .send({})
      ).status,
    ).toBe(400);
    expect(
      (
        await request(demo.t.app)
          .patch(`/api/instruments/${id}`)
          .set(await auth('technician'))
          .send({ notes: 'x' })
      ).status,
    ).toBe(403);
    expect(
      (
        await request(demo.t.app)
          .patch('/api/instruments/99999')
          .set(await auth('admin'))
          .send({ notes: 'x' })
      ).status,
    ).toBe(404);
  });
});
