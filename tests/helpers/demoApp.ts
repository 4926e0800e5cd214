import { afterAll, beforeAll, expect } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp } from './app.js';
import { demoIds } from './demo.js';

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
}

/**
 * Registers the file's `beforeAll` (a fresh database seeded with the demo lab, the demo ids) and
 * `afterAll` (close), and returns the app with the helpers. `captureDefaults` join the body of
 * every capture `newCapture` opens (e.g. an ambient temperature).
 */
export function useDemoApp(captureDefaults: Record<string, unknown> = {}): DemoApp {
  const demo = {} as DemoApp;
  beforeAll(async () => {
    demo.t = await createTestApp();
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
  return demo;
}
