import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { AuditEvent } from '../../server/models/index.js';

const demo = useDemoApp();
const { auth } = demo;

describe('user administration', () => {
  it('lists users for the admin, without password hashes', async () => {
    const res = await request(demo.t.app)
      .get('/api/users')
      .set(await auth('admin'));
    expect(res.status).toBe(200);
    expect(res.body.users).toHaveLength(5);
    expect(JSON.stringify(res.body)).not.toMatch(/hash/i);
  });

  it.each(['lead', 'engineer', 'technician', 'viewer'])(
    'refuses the admin-only user list to the %s with 403',
    async (role) => {
      const res = await request(demo.t.app)
        .get('/api/users')
        .set(await auth(role));
      expect(res.status).toBe(403);
      expect(res.body.error.code).toBe('forbidden');
    },
  );

  it('creates a user who can then sign in', async () => {
    const res = await request(demo.t.app)
      .post('/api/users')
      .set(await auth('admin'))
      .send({
        email: 'new.tech@kestrelbay.example',
        name: 'New Tech',
        role: 'technician',
        password: 'a-long-password',
      });
    expect(res.status).toBe(201);
    expect(res.body.user).toMatchObject({
      email: 'new.tech@kestrelbay.example',
      role: 'technician',
      active: true,
    });
    const login = await request(demo.t.app)
      .post('/api/auth/login')
      .send({ email: 'new.tech@kestrelbay.example', password: 'a-long-password' });
    expect(login.status).toBe(200);
  });

  it('refuses a duplicate e-mail with 409', async () => {
    const res = await request(demo.t.app)
      .post('/api/users')
      .set(await auth('admin'))
      .send({
        email: 'viewer@kestrelbay.example',
        name: 'Again',
        role: 'viewer',
        password: 'a-long-password',
      });
    expect(res.status).toBe(409);
  });

  it.each([
    [
      { email: 'x@kestrelbay.example', name: 'X', role: 'wizard', password: 'a-long-password' },
      'role',
    ],
    [{ email: 'not-an-email', name: 'X', role: 'viewer', password: 'a-long-password' }, 'email'],
    [{ email: 'y@kestrelbay.example', name: 'Y', role: 'viewer', password: 'short' }, 'password'],
  ])('refuses an invalid new user and names the field (%#)', async (body, field) => {
    const res = await request(demo.t.app)
      .post('/api/users')
      .set(await auth('admin'))
      .send(body);
    expect(res.status).toBe(400);
    expect(res.body.error.details.map((d: { path: string }) => d.path)).toContain(field);
  });

  it('changes a role and audits it', async () => {
    const list = await request(demo.t.app)
      .get('/api/users')
      .set(await auth('admin'));
    const viewer = list.body.users.find((u: { role: string }) => u.role === 'viewer');
    const res = await request(demo.t.app)
      .patch(`/api/users/${viewer.id}`)
      .set(await auth('admin'))
      .send({ role: 'engineer' });
    expect(res.status).toBe(200);
    expect(res.body.user.role).toBe('engineer');
    const events = await AuditEvent.findAll({
      where: { action: 'user.role', subjectId: viewer.id },
    });
    expect(events).toHaveLength(1);
    expect(events[0].details).toEqual({ from: 'viewer', to: 'engineer' });
    await request(demo.t.app)
      .patch(`/api/users/${viewer.id}`)
      .set(await auth('admin'))
      .send({ role: 'viewer' });
  });

  it("stops a deactivated user's token from working", async () => {
    const token = await demo.t.tokenFor('technician');
    expect(
      (await request(demo.t.app).get('/api/auth/me').set('authorization', `Bearer ${token}`))
        .status,
    ).toBe(200);
    const me = await request(demo.t.app)
      .get('/api/auth/me')
      .set('authorization', `Bearer ${token}`);
    const res = await request(demo.t.app)
      .patch(`/api/users/${me.body.user.id}`)
      .set(await auth('admin'))
      .send({ active: false });
    expect(res.status).toBe(200);
    const after = await request(demo.t.app)
      .get('/api/auth/me')
      .set('authorization', `Bearer ${token}`);
    expect(after.status).toBe(401);
    expect(after.body.error.code).toBe('account-disabled');
    const relogin = await request(demo.t.app)
      .post('/api/auth/login')
      .send({ email: 'technician@kestrelbay.example', password: 'driftbench-demo' });
    expect(relogin.status).toBe(401);
    await request(demo.t.app)
      .patch(`/api/users/${me.body.user.id}`)
      .set(await auth('admin'))
      .send({ active: true });
  });

  it('does not let an admin deactivate themself', async () => {
    const me = await request(demo.t.app)
      .get('/api/auth/me')
      .set(await auth('admin'));
    const res = await request(demo.t.app)
      .patch(`/api/users/${me.body.user.id}`)
      .set(await auth('admin'))
      .send({ active: false });
    expect(res.status).toBe(409);
  });

  it('answers 404 for a missing user and 400 for a bad id', async () => {
    expect(
      (
        await request(demo.t.app)
          .patch('/api/users/99999')
          .set(await auth('admin'))
          .send({ name: 'Z' })
      ).status,
    ).toBe(404);
    expect(
      (
        await request(demo.t.app)
          .patch('/api/users/abc')
          .set(await auth('admin'))
          .send({ name: 'Z' })
      ).status,
    ).toBe(400);
  });
});
