import { describe, expect, it } from 'vitest';
import request from 'supertest';
import jwt from 'jsonwebtoken';
import { TEST_JWT_SECRET } from '../helpers/app.js';
import { useDemoApp } from '../helpers/demoApp.js';

const demo = useDemoApp();

describe('sign-in', () => {
  it('signs in a demo user and returns a token and the user', async () => {
    const res = await request(demo.t.app)
      .post('/api/auth/login')
      .send({ email: 'Engineer@KestrelBay.example', password: 'driftbench-demo' });
    expect(res.status).toBe(200);
    expect(res.body.user).toMatchObject({ email: 'engineer@kestrelbay.example', role: 'engineer' });
    expect(Object.keys(res.body.user).sort()).toEqual(['email', 'id', 'name', 'role']);
    const claims = jwt.verify(res.body.token, TEST_JWT_SECRET, {
      algorithms: ['HS256'],
    }) as jwt.JwtPayload;
    expect(claims.exp! - claims.iat!).toBe(12 * 3600);
  });

  it('answers a wrong password and an unknown user the same way', async () => {
    const wrong = await request(demo.t.app)
      .post('/api/auth/login')
      .send({ email: 'lead@kestrelbay.example', password: 'not-the-password' });
    const unknown = await request(demo.t.app)
      .post('/api/auth/login')
      .send({ email: 'nobody@kestrelbay.example', password: 'not-the-password' });
    expect(wrong.status).toBe(401);
    expect(unknown.status).toBe(401);
    expect(wrong.body).toEqual(unknown.body);
    expect(wrong.body.error.code).toBe('invalid-credentials');
  });

  it('refuses a login body without an e-mail, naming the field', async () => {
    const res = await request(demo.t.app).post('/api/auth/login').send({ password: 'x' });
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation');
    expect(res.body.error.details[0].path).toBe('email');
  });

  it('refuses malformed JSON with 400', async () => {
    const res = await request(demo.t.app)
      .post('/api/auth/login')
      .set('content-type', 'application/json')
      .send('{"email":');
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('bad-json');
  });
});

describe('me', () => {
  it('returns the signed-in user', async () => {
    const res = await request(demo.t.app)
      .get('/api/auth/me')
      .set('authorization', `Bearer ${await demo.t.tokenFor('technician')}`);
    expect(res.status).toBe(200);
    expect(res.body.user).toMatchObject({
      email: 'technician@kestrelbay.example',
      role: 'technician',
    });
  });

  it('answers 401 without a token', async () => {
    const res = await request(demo.t.app).get('/api/auth/me');
    expect(res.status).toBe(401);
    expect(res.body.error.code).toBe('unauthorized');
  });

  it('answers 401 to a malformed token', async () => {
    const res = await request(demo.t.app)
      .get('/api/auth/me')
      .set('authorization', 'Bearer not.a.jwt');
    expect(res.status).toBe(401);
    expect(res.body.error.code).toBe('unauthorized');
  });

  it('answers 401 token-expired to an expired token', async () => {
    const expired = jwt.sign(
      { role: 'viewer', exp: Math.floor(Date.now() / 1000) - 60 },
      TEST_JWT_SECRET,
      { algorithm: 'HS256', subject: '1' },
    );
    const res = await request(demo.t.app)
      .get('/api/auth/me')
      .set('authorization', `Bearer ${expired}`);
    expect(res.status).toBe(401);
    expect(res.body.error.code).toBe('token-expired');
  });

  it('refuses a token signed with another secret', async () => {
    const forged = jwt.sign({ role: 'admin' }, 'another-secret-another-secret-another', {
      algorithm: 'HS256',
      subject: '1',
    });
    const res = await request(demo.t.app)
      .get('/api/auth/me')
      .set('authorization', `Bearer ${forged}`);
    expect(res.status).toBe(401);
  });
});

describe('the rest of /api', () => {
  it('answers 404 JSON for an unknown route', async () => {
    const res = await request(demo.t.app)
      .get('/api/no-such-thing')
      .set('authorization', `Bearer ${await demo.t.tokenFor('viewer')}`);
    expect(res.status).toBe(404);
    expect(res.body.error.code).toBe('not-found');
  });

  it('reports database health without sign-in', async () => {
    const res = await request(demo.t.app).get('/api/health');
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ status: 'ok', database: { ok: true } });
  });

  it('sets security headers with a content security policy', async () => {
    const res = await request(demo.t.app).get('/api/health');
    expect(res.headers['content-security-policy']).toContain("script-src 'self'");
    expect(res.headers['x-content-type-options']).toBe('nosniff');
  });
});
