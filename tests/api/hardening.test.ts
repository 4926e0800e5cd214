import { describe, expect, it } from 'vitest';
import request from 'supertest';
import pg from 'pg';
import { pino } from 'pino';
import { Writable } from 'node:stream';
import { useDemoApp } from '../helpers/demoApp.js';
import { isCalendarDate, textProblem } from '../../shared/protocol/text.js';

// Issue 10, items 3, 6 and 11: bodies are read only after sign-in and are small except on the
// ingest route; odd text and impossible dates are a 400 with nothing kept; a change and its
// audit event are one transaction; a database outage answers 503 with Retry-After, logged once.
const demo = useDemoApp();

const count = async (table: string) =>
  Number((await demo.t.db.pool.query(`SELECT count(*)::int AS n FROM ${table}`)).rows[0].n);

describe('bodies are read only after sign-in (item 3)', () => {
  it('answers an anonymous malformed body with 401, not a parse error: the body was never read', async () => {
    const res = await request(demo.t.app)
      .post('/api/studies')
      .set('content-type', 'application/json')
      .send('{"title":');
    expect(res.status).toBe(401);
  });

  it('answers an anonymous 9 MB body with 401, not 413', async () => {
    const big = JSON.stringify({ title: 'x'.repeat(9 * 1024 * 1024) });
    const res = await request(demo.t.app)
      .post('/api/studies')
      .set('content-type', 'application/json')
      .send(big);
    expect(res.status).toBe(401);
  });

  it('refuses a signed-in body over 100 kB on an ordinary route with 413', async () => {
    const res = await request(demo.t.app)
      .post('/api/studies')
      .set(await demo.auth('lead'))
      .set('content-type', 'application/json')
      .send(JSON.stringify({ title: 'Wash study', description: 'x'.repeat(150 * 1024) }));
    expect(res.status).toBe(413);
    expect(res.body.error.code).toBe('too-large');
  });

  it('still takes a batch of 20,000 readings (about 1 MB) on the ingest route', async () => {
    const study = (
      await request(demo.t.app)
        .get('/api/studies/1')
        .set(await demo.auth('lead'))
    ).body;
    const capture = await request(demo.t.app)
      .post('/api/captures')
      .set(await demo.auth('lead'))
      .send(demo.captureBody({ dutId: study.duts[0].id, checkpointId: study.checkpoints[0].id }));
    expect(capture.status).toBe(201);
    const readings = Array.from({ length: 20_000 }, (_, seq) => ({
      seq,
      t: seq,
      value: 16_000_000.123456 + (seq % 7) * 1e-3,
    }));
    const res = await request(demo.t.app)
      .post(`/api/captures/${capture.body.id}/readings`)
      .set(await demo.auth('lead'))
      .send({ readings });
    expect(res.status).toBe(200);
    expect(res.body.accepted).toBe(20_000);
  });
});

describe('odd text and impossible dates are a 400 with nothing kept (item 6)', () => {
  it('classifies text by hand-made cases (common practice, no source)', () => {
    expect(textProblem('plain name')).toBeNull();
    expect(textProblem('emoji 🙂 is a proper pair')).toBeNull();
    expect(textProblem('nul\u0000')).not.toBeNull();
    expect(textProblem('lone high \uD83D')).not.toBeNull();
    expect(textProblem('\uDE42 lone low')).not.toBeNull();
    expect(isCalendarDate('2027-02-28')).toBe(true);
    expect(isCalendarDate('2028-02-29')).toBe(true); // 2028 is a leap year (Gregorian rule)
    expect(isCalendarDate('2027-02-29')).toBe(false);
    expect(isCalendarDate('0000-01-01')).toBe(false);
    expect(isCalendarDate('9999-12-31')).toBe(false);
  });

  const odd = ['Counter \u0000 C-9', 'Counter \uD800 C-9', '\uDC00Counter'];

  it.each(odd)('refuses an instrument named %j with 400 and creates nothing', async (name) => {
    const before = await count('instruments');
    const res = await request(demo.t.app)
      .post('/api/instruments')
      .set(await demo.auth('admin'))
      .send({ name, kind: 'counter' });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0].path).toBe('name');
    expect(await count('instruments')).toBe(before);
  });

  it.each(odd)('refuses a study, a DUT and a user named %j with 400', async (text) => {
    const study = await request(demo.t.app)
      .post('/api/studies')
      .set(await demo.auth('lead'))
      .send({ title: text });
    expect(study.status).toBe(400);
    const dut = await request(demo.t.app)
      .post('/api/studies/1/duts')
      .set(await demo.auth('lead'))
      .send({
        label: text,
        kind: 'crystal',
        nominal: 16e6,
        unit: 'Hz',
        limit: 1,
        limitUnit: 'ppm',
      });
    expect(dut.status).toBe(400);
    const before = (await demo.t.db.pool.query('SELECT name FROM users WHERE id = 5')).rows[0].name;
    const user = await request(demo.t.app)
      .patch('/api/users/5')
      .set(await demo.auth('admin'))
      .send({ name: text });
    expect(user.status).toBe(400);
    expect((await demo.t.db.pool.query('SELECT name FROM users WHERE id = 5')).rows[0].name).toBe(
      before,
    );
  });

  it('refuses NUL inside a link profile (JSON) with 400', async () => {
    const res = await request(demo.t.app)
      .put('/api/instruments/1/link-profile')
      .set(await demo.auth('admin'))
      .send({ name: 'x\u0000', kind: 'serial' });
    expect(res.status).toBe(400);
  });

  it.each(['0000-01-01', '2027-02-30', '9999-12-31', '1899-12-31'])(
    'refuses the calibration date %s with 400',
    async (calibrationDue) => {
      const res = await request(demo.t.app)
        .patch('/api/instruments/1')
        .set(await demo.auth('admin'))
        .send({ calibrationDue });
      expect(res.status).toBe(400);
      expect(res.body.error.details[0].path).toBe('calibrationDue');
    },
  );
});

describe('a change and its audit event are one transaction (item 6)', () => {
  it('keeps neither the instrument nor the user change when the audit event cannot be written', async () => {
    // A trigger that refuses one audit action stands in for any failure while auditing.
    await demo.t.db.pool.query(`
      CREATE FUNCTION refuse_audit() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN IF NEW.action IN ('instrument.update', 'user.rename', 'instrument.create') THEN RAISE EXCEPTION 'audit refused for the test'; END IF; RETURN NEW; END $$;
      CREATE TRIGGER refuse_audit BEFORE INSERT ON audit_events FOR EACH ROW EXECUTE FUNCTION refuse_audit();`);
    try {
      const before = (await demo.t.db.pool.query('SELECT name FROM instruments WHERE id = 1'))
        .rows[0].name;
      const patch = await request(demo.t.app)
        .patch('/api/instruments/1')
        .set(await demo.auth('admin'))
        .send({ name: 'Renamed without audit' });
      expect(patch.status).toBe(500);
      expect(
        (await demo.t.db.pool.query('SELECT name FROM instruments WHERE id = 1')).rows[0].name,
      ).toBe(before);

      const instruments = await count('instruments');
      expect(
        (
          await request(demo.t.app)
            .post('/api/instruments')
            .set(await demo.auth('admin'))
            .send({ name: 'Unaudited', kind: 'other' })
        ).status,
      ).toBe(500);
      expect(await count('instruments')).toBe(instruments);

      const userBefore = (await demo.t.db.pool.query('SELECT name FROM users WHERE id = 5')).rows[0]
        .name;
      expect(
        (
          await request(demo.t.app)
            .patch('/api/users/5')
            .set(await demo.auth('admin'))
            .send({ name: 'Renamed without audit' })
        ).status,
      ).toBe(500);
      expect((await demo.t.db.pool.query('SELECT name FROM users WHERE id = 5')).rows[0].name).toBe(
        userBefore,
      );
    } finally {
      await demo.t.db.pool.query(
        'DROP TRIGGER refuse_audit ON audit_events; DROP FUNCTION refuse_audit();',
      );
    }
  });
});

describe('a database outage answers 503 (item 11)', () => {
  it('answers 503 with Retry-After while the database refuses connections, logs it once, and recovers', async () => {
    const lines: string[] = [];
    const sink = new Writable({
      write(chunk, _enc, done) {
        lines.push(String(chunk));
        done();
      },
    });
    const app = demo.t.appWith({ log: pino({ level: 'info' }, sink) });
    const dbName = new URL(demo.t.db.url).pathname.slice(1);
    const adminClient = new pg.Client({ connectionString: process.env.DRIFTBENCH_TEST_PG });
    await adminClient.connect();
    try {
      await adminClient.query(`ALTER DATABASE "${dbName}" ALLOW_CONNECTIONS false`);
      await adminClient.query(
        'SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = $1 AND pid <> pg_backend_pid()',
        [dbName],
      );
      for (let i = 0; i < 4; i++) {
        const res = await request(app)
          .get('/api/studies')
          .set(await demo.auth('lead'));
        expect(res.status).toBe(503);
        expect(res.headers['retry-after']).toBe('5');
        expect(res.body.error.code).toBe('database-unavailable');
      }
      expect(lines.filter((l) => l.includes('database unreachable'))).toHaveLength(1);
      const health = await request(app).get('/api/health');
      expect(health.status).toBe(503);
      expect(health.headers['retry-after']).toBe('5');
    } finally {
      await adminClient.query(`ALTER DATABASE "${dbName}" ALLOW_CONNECTIONS true`);
      await adminClient.end();
    }
    // Back: requests succeed again.
    let status = 0;
    for (let i = 0; i < 10 && status !== 200; i++)
      status = (
        await request(app)
          .get('/api/studies')
          .set(await demo.auth('lead'))
      ).status;
    expect(status).toBe(200);
  });
});
