import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';

// Sign-in limits count failures only, so the demo set-up's own sign-in leaves all three.
const demo = useDemoApp({}, { loginRateLimit: 3 });

describe('login rate limit', () => {
  it('answers 429 after too many attempts', async () => {
    const attempt = () =>
      request(demo.t.app)
        .post('/api/auth/login')
        .send({ email: 'lead@kestrelbay.example', password: 'wrong-password' });
    for (let i = 0; i < 3; i++) expect((await attempt()).status).toBe(401);
    const res = await attempt();
    expect(res.status).toBe(429);
    expect(res.body.error.code).toBe('rate-limited');
  });
});
