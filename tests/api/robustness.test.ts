import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import fc from 'fast-check';
import { createTestApp, type TestApp } from '../helpers/app.js';

// Nothing a client sends may crash the server or produce a 500: arbitrary JSON bodies and
// query strings against every writing route answer with a 4xx and the error envelope.
let t: TestApp;
let admin: string;
beforeAll(async () => {
  t = await createTestApp();
  admin = await t.tokenFor('admin');
});
afterAll(async () => {
  await t.close();
});

const ROUTES: Array<['post' | 'patch' | 'get', string]> = [
  ['post', '/api/auth/login'],
  ['post', '/api/users'],
  ['patch', '/api/users/1'],
  ['post', '/api/studies'],
  ['post', '/api/studies/1/checkpoints'],
  ['post', '/api/studies/1/duts'],
  ['post', '/api/captures'],
  ['patch', '/api/captures/1'],
  ['post', '/api/captures/1/readings'],
];

describe('robustness against arbitrary input', () => {
  it.each(ROUTES)('answers %s %s with a 4xx envelope for arbitrary JSON', async (method, path) => {
    await fc.assert(
      fc.asyncProperty(fc.jsonValue({ maxDepth: 3 }), async (body) => {
        const res = await request(t.app)[method](path).set('authorization', `Bearer ${admin}`).set('content-type', 'application/json').send(JSON.stringify(body));
        // A body that happens to be valid may succeed; it must never be a server error.
        expect(res.status).toBeLessThan(500);
        if (res.status >= 400) expect(typeof res.body.error?.code).toBe('string');
      }),
      { numRuns: 25 },
    );
  });

  it('answers arbitrary query strings on the read routes without a 500', async () => {
    await fc.assert(
      fc.asyncProperty(fc.string({ maxLength: 20 }), fc.string({ maxLength: 20 }), async (a, b) => {
        for (const path of ['/api/captures', '/api/comparisons', '/api/captures/1/readings', '/api/captures/1/analysis']) {
          const res = await request(t.app).get(path).query({ from: a, to: b, maxPoints: a, kind: b, before: a, after: b, state: a }).set('authorization', `Bearer ${admin}`);
          expect(res.status).toBeLessThan(500);
        }
      }),
      { numRuns: 20 },
    );
  });

  it('answers odd path parameters with 400 or 404, never 500', async () => {
    for (const id of ['0', '-1', '1.5', '99999999999999999999', 'abc', '%00']) {
      const res = await request(t.app).get(`/api/captures/${id}`).set('authorization', `Bearer ${admin}`);
      expect([400, 404]).toContain(res.status);
    }
  });
});
