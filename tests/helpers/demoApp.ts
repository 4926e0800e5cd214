import { afterAll, beforeAll, expect } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp, type TestAppOptions } from './app.js';
import { accelerationBody, demoIds } from './demo.js';
import { encodeReadingsF64, READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';
import type { ReadingIn } from '../../shared/protocol/captures.js';

export type DemoIds = Awaited<ReturnType<typeof demoIds>>;

export type Method = 'get' | 'post' | 'patch' | 'put' | 'delete';

/** The test app of one test file, the demo study's ids, and the requests capture tests repeat. */
export interface DemoApp {
  /** The app (set in beforeAll). */
  t: TestApp;
  /** The demo study's checkpoints and DUTs (set in beforeAll). */
  ids: DemoIds;
  /** The bearer header of the demo user of `role`. */
  auth(role: string): Promise<{ authorization: string }>;
  /** One request as `role` (`call('viewer', 'get', '/api/…')`), with `body` as JSON when given. */
  call(role: string, method: Method, path: string, body?: object): Promise<request.Response>;
  /** The body `newCapture` sends, with `extra` joined. */
  captureBody(extra?: Record<string, unknown>): Record<string, unknown>;
  /** Opens a 1 s-gate frequency capture of the demo crystal at the first checkpoint; its id. */
  newCapture(role?: string, extra?: Record<string, unknown>): Promise<number>;
  /** Posts one batch `{ readings }` to a capture, as `role` (tests send bad readings too). */
  postReadings(id: number, readings: unknown[], role?: string): Promise<request.Response>;
  /** The `extra` of a 0.1 s acceleration capture (mg, 23 °C) of the demo accelerometer. */
  accelBody(checkpointId: number, orientation: string): Record<string, unknown>;
  /**
   * Opens a capture as `role` (technician by default; the body of `newCapture` with `extra`),
   * posts `readings` in one batch and finishes it unless `open`, expecting 201, 200 and 200; its id.
   */
  recordCapture(
    readings: ReadingIn[],
    extra?: Record<string, unknown>,
    opts?: { role?: string; open?: boolean },
  ): Promise<number>;
  /** Posts one batch as a binary body (READINGS_F64_TYPE): readings to encode, or bytes as made. */
  postBinary(id: number, body: ReadingIn[] | Uint8Array, role?: string): Promise<request.Response>;
  /** How many SQL statements the app's raw pool and Sequelize send while `fn` runs. */
  queriesOf(fn: () => Promise<unknown>): Promise<number>;
  /**
   * Stores readings seq 0…n−1 (t = seq, flags 0, value = the SQL expression `valueSql` of `s`)
   * straight into the table and sets the capture's counters, bypassing the ingest, as an import
   * or an older server might have stored them.
   */
  storeStraight(id: number, n: number, valueSql: string): Promise<void>;
}

/**
 * Registers the file's `beforeAll` (a fresh database seeded with the demo lab, the demo ids) and
 * `afterAll` (close), and returns the app with the helpers. `captureDefaults` join the body of
 * every capture `newCapture` opens (e.g. an ambient temperature); `appOptions` go to
 * createTestApp (e.g. `{ analysis: { openFreshMs: 0 } }` for an app with an analysis pool).
 */
export function useDemoApp(
  captureDefaults: Record<string, unknown> = {},
  appOptions: TestAppOptions = {},
): DemoApp {
  const demo = {} as DemoApp;
  beforeAll(async () => {
    demo.t = await createTestApp(appOptions);
    demo.ids = await demoIds(demo.t.app, await demo.t.tokenFor('engineer'));
  });
  afterAll(async () => {
    await demo.t.close();
  });
  demo.auth = async (role) => ({ authorization: `Bearer ${await demo.t.tokenFor(role)}` });
  demo.call = async (role, method, path, body) => {
    const req = request(demo.t.app)
      [method](path)
      .set(await demo.auth(role));
    return body === undefined ? req : req.send(body);
  };
  demo.captureBody = (extra = {}) => ({
    dutId: demo.ids.crystal.id,
    checkpointId: demo.ids.checkpoints[0],
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
    ...captureDefaults,
    ...extra,
  });
  demo.newCapture = async (role = 'technician', extra = {}) => {
    const res = await request(demo.t.app)
      .post('/api/captures')
      .set(await demo.auth(role))
      .send(demo.captureBody(extra));
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    return res.body.id as number;
  };
  demo.postReadings = async (id, readings, role = 'technician') =>
    request(demo.t.app)
      .post(`/api/captures/${id}/readings`)
      .set(await demo.auth(role))
      .send({ readings });
  demo.accelBody = (checkpointId, orientation) =>
    accelerationBody(demo.ids.accelerometer.id, checkpointId, orientation);
  demo.recordCapture = async (readings, extra = {}, { role = 'technician', open = false } = {}) => {
    const id = await demo.newCapture(role, extra);
    const posted = await demo.postReadings(id, readings, role);
    expect(posted.status, JSON.stringify(posted.body)).toBe(200);
    if (!open) {
      const finished = await demo.call(role, 'post', `/api/captures/${id}/finish`);
      expect(finished.status, JSON.stringify(finished.body)).toBe(200);
    }
    return id;
  };
  demo.postBinary = async (id, body, role = 'technician') => {
    const bytes = body instanceof Uint8Array ? body : encodeReadingsF64(body);
    return request(demo.t.app)
      .post(`/api/captures/${id}/readings`)
      .set(await demo.auth(role))
      .set('content-type', READINGS_F64_TYPE)
      .send(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength));
  };
  demo.queriesOf = async (fn) => {
    let n = 0;
    const pool = demo.t.db.pool as unknown as { query: (...a: unknown[]) => unknown };
    const original = pool.query;
    pool.query = function (this: unknown, ...a: unknown[]) {
      n++;
      return original.apply(this, a);
    };
    const options = (demo.t.db.sequelize as unknown as { options: { logging?: unknown } }).options;
    const logging = options.logging;
    options.logging = () => {
      n++;
    };
    try {
      await fn();
    } finally {
      pool.query = original;
      options.logging = logging;
    }
    return n;
  };
  demo.storeStraight = async (id, n, valueSql) => {
    const pool = demo.t.db.pool;
    await pool.query(
      `INSERT INTO readings (capture_id, seq, t, value, flags)
       SELECT $1, s, s, ${valueSql}, 0 FROM generate_series(0, $2 - 1) s`,
      [id, n],
    );
    await pool.query('UPDATE captures SET reading_count = $2, highest_seq = $2 - 1 WHERE id = $1', [
      id,
      n,
    ]);
  };
  return demo;
}
