import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { createTestApp, type TestApp } from '../helpers/app.js';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp({ loginRateLimit: 3 });
});
afterAll(async () => {
  await t.close();
});

describe('login rate limit', () => {
  it('answers 429 after too many attempts', async () => {
    const attempt = () =>
      request(t.app)
        .post('/api/auth/login')
        .send({ email: 'lead@kestrelbay.example', password: 'wrong-password' });
    for (let i = 0; i < 3; i++) expect((await attempt()).status).toBe(401);
    const res = await attempt();
    expect(res.status).toBe(429);
    expect(res.body.error.code).toBe('rate-limited');
  });
});
