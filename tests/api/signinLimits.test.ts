import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { createApp } from '../../server/app.js';
import { useDemoApp } from '../helpers/demoApp.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import { parseTrustProxy } from '../../server/config.js';

// Issue 10, item 8: sign-in limits count failures only, per address and per account, and honour
// a configured proxy.
const demo = useDemoApp();

/** An app of its own (its own in-memory counts) over the file's database. */
function appWith(opts: {
  loginRateLimit: number;
  loginAccountLimit: number;
  trustProxy?: boolean;
}) {
  return { app: demo.t.appWith(opts) };
}

const attempt = (
  app: ReturnType<typeof createApp>,
  email: string,
  password: string,
  forwardedFor?: string,
) => {
  const r = request(app).post('/api/auth/login');
  if (forwardedFor) r.set('x-forwarded-for', forwardedFor);
  return r.send({ email, password });
};

describe('sign-in limits', () => {
  it('never limits successful sign-ins (normal use is not throttled)', async () => {
    const t = appWith({ loginRateLimit: 3, loginAccountLimit: 3 });
    for (let i = 0; i < 8; i++)
      expect((await attempt(t.app, `viewer@${DEMO_DOMAIN}`, DEMO_PASSWORD)).status).toBe(200);
  });

  it('limits failures per account across addresses: the right password is refused too once the account is locked', async () => {
    const t = appWith({ loginRateLimit: 100, loginAccountLimit: 4, trustProxy: true });
    for (let i = 0; i < 4; i++) {
      expect(
        (await attempt(t.app, `lead@${DEMO_DOMAIN}`, 'wrong-password', `198.51.100.${i + 1}`))
          .status,
      ).toBe(401);
    }
    const locked = await attempt(t.app, `lead@${DEMO_DOMAIN}`, DEMO_PASSWORD, '198.51.100.77');
    expect(locked.status).toBe(429);
    expect(locked.body.error.code).toBe('rate-limited');
    expect(Number(locked.headers['retry-after'])).toBeGreaterThan(0);
    // Another account is not affected.
    expect(
      (await attempt(t.app, `engineer@${DEMO_DOMAIN}`, DEMO_PASSWORD, '198.51.100.77')).status,
    ).toBe(200);
  });

  it('limits failures per address; with trust proxy on, each forwarded client has its own count', async () => {
    const t = appWith({ loginRateLimit: 3, loginAccountLimit: 100, trustProxy: true });
    for (let i = 0; i < 3; i++)
      expect(
        (await attempt(t.app, `nobody${i}@${DEMO_DOMAIN}`, 'wrong-password', '203.0.113.9')).status,
      ).toBe(401);
    expect(
      (await attempt(t.app, `viewer@${DEMO_DOMAIN}`, DEMO_PASSWORD, '203.0.113.9')).status,
    ).toBe(429);
    // A colleague behind the same proxy signs in.
    expect(
      (await attempt(t.app, `viewer@${DEMO_DOMAIN}`, DEMO_PASSWORD, '203.0.113.10')).status,
    ).toBe(200);
  });

  it('ignores X-Forwarded-For when trust proxy is off (a client cannot pick its own address)', async () => {
    const t = appWith({ loginRateLimit: 3, loginAccountLimit: 100 });
    for (let i = 0; i < 3; i++)
      expect(
        (await attempt(t.app, `nobody${i}@${DEMO_DOMAIN}`, 'wrong-password', `192.0.2.${i}`))
          .status,
      ).toBe(401);
    expect(
      (await attempt(t.app, `viewer@${DEMO_DOMAIN}`, DEMO_PASSWORD, '192.0.2.99')).status,
    ).toBe(429);
  });

  it('reads TRUST_PROXY as off, on, a hop count or a list', () => {
    expect(parseTrustProxy('false')).toBe(false);
    expect(parseTrustProxy('true')).toBe(true);
    expect(parseTrustProxy('2')).toBe(2);
    expect(parseTrustProxy('loopback, 10.0.0.0/8')).toEqual(['loopback', '10.0.0.0/8']);
  });
});
