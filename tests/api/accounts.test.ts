import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import jwt from 'jsonwebtoken';
import { TEST_JWT_SECRET } from '../helpers/app.js';
import { useDemoApp } from '../helpers/demoApp.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import { retireDemoAccounts } from '../../server/db/demoAccounts.js';
import { loadConfig } from '../../server/config.js';

// Issue 10, item 9: passwords can be changed and reset, the policy holds, tokens are revoked on
// sign-out, deactivation, role change and password change, and demo accounts stay off in
// production unless asked for.
const demo = useDemoApp();
let admin: { authorization: string };
beforeAll(async () => {
  admin = await demo.auth('admin');
});

const login = (email: string, password: string) =>
  request(demo.t.app).post('/api/auth/login').send({ email, password });
const me = (token: string) =>
  request(demo.t.app).get('/api/auth/me').set('authorization', `Bearer ${token}`);

async function newUser(email: string, role = 'technician', password = 'a-long-password') {
  const res = await request(demo.t.app)
    .post('/api/users')
    .set(admin)
    .send({ email, name: email.split('@')[0], role, password });
  expect(res.status).toBe(201);
  const signed = await login(email, password);
  expect(signed.status).toBe(200);
  return { id: res.body.user.id as number, token: signed.body.token as string };
}

describe('change my password (POST /api/auth/password)', () => {
  it('changes the password, answers a fresh token and revokes the older ones', async () => {
    const u = await newUser('changer@kestrelbay.example');
    const res = await request(demo.t.app)
      .post('/api/auth/password')
      .set('authorization', `Bearer ${u.token}`)
      .send({ currentPassword: 'a-long-password', newPassword: 'copper tick drifts 7' });
    expect(res.status).toBe(200);
    expect(typeof res.body.token).toBe('string');
    expect((await me(res.body.token)).status).toBe(200);
    const old = await me(u.token);
    expect(old.status).toBe(401);
    expect(old.body.error.code).toBe('session-ended');
    expect((await login('changer@kestrelbay.example', 'a-long-password')).status).toBe(401);
    expect((await login('changer@kestrelbay.example', 'copper tick drifts 7')).status).toBe(200);
  });

  it('refuses a wrong current password with 403 and keeps the old one', async () => {
    const u = await newUser('wrongcurrent@kestrelbay.example');
    const res = await request(demo.t.app)
      .post('/api/auth/password')
      .set('authorization', `Bearer ${u.token}`)
      .send({ currentPassword: 'not-my-password', newPassword: 'copper tick drifts 8' });
    expect(res.status).toBe(403);
    expect(res.body.error.code).toBe('wrong-password');
    expect((await login('wrongcurrent@kestrelbay.example', 'a-long-password')).status).toBe(200);
  });

  it.each([
    ['eleven char', 'shorter than 12 characters'],
    ['Password1234', 'a common password, any case'],
    ['é'.repeat(37), 'more than 72 bytes in UTF-8 (74)'],
    ['a'.repeat(73), 'more than 72 bytes'],
    ['nul\u0000inside-password', 'a NUL character'],
  ])('refuses the new password %j (%s) with 400 naming newPassword', async (newPassword) => {
    const u = await newUser(`policy${Math.random().toString(36).slice(2, 8)}@kestrelbay.example`);
    const res = await request(demo.t.app)
      .post('/api/auth/password')
      .set('authorization', `Bearer ${u.token}`)
      .send({ currentPassword: 'a-long-password', newPassword });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0].path).toBe('newPassword');
  });

  it('applies the same policy when an admin creates an account', async () => {
    const res = await request(demo.t.app).post('/api/users').set(admin).send({
      email: 'weak@kestrelbay.example',
      name: 'Weak',
      role: 'viewer',
      password: 'administrator',
    });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0].path).toBe('password');
  });

  it('keeps the demo password (15 characters) working', async () => {
    expect((await login(`viewer@${DEMO_DOMAIN}`, DEMO_PASSWORD)).status).toBe(200);
  });
});

describe('sign-out and token revocation', () => {
  it('POST /api/auth/logout ends the session: the token answers 401 afterwards', async () => {
    const u = await newUser('leaver@kestrelbay.example');
    const out = await request(demo.t.app)
      .post('/api/auth/logout')
      .set('authorization', `Bearer ${u.token}`);
    expect(out.status).toBe(204);
    const after = await me(u.token);
    expect(after.status).toBe(401);
    expect(after.body.error.code).toBe('session-ended');
  });

  it('a role change revokes the tokens the user holds', async () => {
    const u = await newUser('promoted@kestrelbay.example');
    const patch = await request(demo.t.app)
      .patch(`/api/users/${u.id}`)
      .set(admin)
      .send({ role: 'engineer' });
    expect(patch.status).toBe(200);
    expect((await me(u.token)).status).toBe(401);
  });

  it('a deactivation revokes the tokens, and reactivating does not bring them back', async () => {
    const u = await newUser('paused@kestrelbay.example');
    await request(demo.t.app)
      .patch(`/api/users/${u.id}`)
      .set(admin)
      .send({ active: false })
      .expect(200);
    await request(demo.t.app)
      .patch(`/api/users/${u.id}`)
      .set(admin)
      .send({ active: true })
      .expect(200);
    const res = await me(u.token);
    expect(res.status).toBe(401);
    expect(res.body.error.code).toBe('session-ended');
  });

  it('a renaming leaves the tokens alone', async () => {
    const u = await newUser('renamed@kestrelbay.example');
    await request(demo.t.app)
      .patch(`/api/users/${u.id}`)
      .set(admin)
      .send({ name: 'Renamed Tech' })
      .expect(200);
    expect((await me(u.token)).status).toBe(200);
  });

  it('refuses a token without a token version once the user has moved on', async () => {
    const u = await newUser('legacy@kestrelbay.example');
    const legacy = jwt.sign({ role: 'technician' }, TEST_JWT_SECRET, {
      algorithm: 'HS256',
      subject: String(u.id),
      expiresIn: '1h',
    });
    expect((await me(legacy)).status).toBe(200);
    await request(demo.t.app)
      .post('/api/auth/logout')
      .set('authorization', `Bearer ${u.token}`)
      .expect(204);
    expect((await me(legacy)).status).toBe(401);
  });
});

describe('admin password reset (POST /api/users/:id/password-reset)', () => {
  it('sets a temporary password, revokes tokens, and forces a change before anything else', async () => {
    const u = await newUser('forgetful@kestrelbay.example');
    const reset = await request(demo.t.app)
      .post(`/api/users/${u.id}/password-reset`)
      .set(admin)
      .send({ temporaryPassword: 'temporary-bench-key' });
    expect(reset.status).toBe(200);
    expect(reset.body.user.mustChangePassword).toBe(true);
    expect((await me(u.token)).status).toBe(401);

    const signed = await login('forgetful@kestrelbay.example', 'temporary-bench-key');
    expect(signed.status).toBe(200);
    expect(signed.body.mustChangePassword).toBe(true);
    const token = signed.body.token as string;
    const meRes = await me(token);
    expect(meRes.status).toBe(200);
    expect(meRes.body.mustChangePassword).toBe(true);
    const blocked = await request(demo.t.app)
      .get('/api/studies')
      .set('authorization', `Bearer ${token}`);
    expect(blocked.status).toBe(403);
    expect(blocked.body.error.code).toBe('password-change-required');

    const changed = await request(demo.t.app)
      .post('/api/auth/password')
      .set('authorization', `Bearer ${token}`)
      .send({ currentPassword: 'temporary-bench-key', newPassword: 'my own bench key 42' });
    expect(changed.status).toBe(200);
    expect(changed.body.mustChangePassword).toBe(false);
    expect(
      (
        await request(demo.t.app)
          .get('/api/studies')
          .set('authorization', `Bearer ${changed.body.token}`)
      ).status,
    ).toBe(200);
  });

  it('is for admins only', async () => {
    const res = await request(demo.t.app)
      .post('/api/users/1/password-reset')
      .set('authorization', `Bearer ${await demo.t.tokenFor('lead')}`)
      .send({ temporaryPassword: 'temporary-bench-key' });
    expect(res.status).toBe(403);
  });

  it('writes an audit event without the password', async () => {
    const u = await newUser('audited@kestrelbay.example');
    await request(demo.t.app)
      .post(`/api/users/${u.id}/password-reset`)
      .set(admin)
      .send({ temporaryPassword: 'temporary-bench-key' })
      .expect(200);
    const rows = await demo.t.db.pool.query(
      "SELECT details::text AS d FROM audit_events WHERE action = 'user.password.reset' AND subject_id = $1",
      [u.id],
    );
    expect(rows.rowCount).toBe(1);
    expect(String(rows.rows[0].d)).not.toContain('temporary-bench-key');
  });
});

describe('demo accounts in production', () => {
  it('are off in production unless DRIFTBENCH_DEMO=1, on by default in development', () => {
    expect(loadConfig({ NODE_ENV: 'production' }).demo).toBe(false);
    expect(loadConfig({ NODE_ENV: 'production', DRIFTBENCH_DEMO: '1' }).demo).toBe(true);
    expect(loadConfig({ NODE_ENV: 'development' }).demo).toBe(true);
  });

  it('deactivates demo accounts that still have the demo password, and leaves a changed one alone', async () => {
    const lead = await login(`lead@${DEMO_DOMAIN}`, DEMO_PASSWORD);
    await request(demo.t.app)
      .post('/api/auth/password')
      .set('authorization', `Bearer ${lead.body.token}`)
      .send({ currentPassword: DEMO_PASSWORD, newPassword: 'lead has her own key' })
      .expect(200);
    const retired = await retireDemoAccounts();
    expect(retired.sort()).toEqual([
      `admin@${DEMO_DOMAIN}`,
      `engineer@${DEMO_DOMAIN}`,
      `technician@${DEMO_DOMAIN}`,
      `viewer@${DEMO_DOMAIN}`,
    ]);
    expect((await login(`viewer@${DEMO_DOMAIN}`, DEMO_PASSWORD)).status).toBe(401);
    expect((await login(`lead@${DEMO_DOMAIN}`, 'lead has her own key')).status).toBe(200);
  });
});
