// @vitest-environment happy-dom
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { createPinia, setActivePinia } from 'pinia';
import { SESSION_KEY, useSessionStore } from '../../../src/stores/session';
import { queueFetch, technician } from './helpers';

describe('session store', () => {
  beforeEach(() => {
    localStorage.clear();
    setActivePinia(createPinia());
  });
  afterEach(() => vi.unstubAllGlobals());

  it('stores the token and user after signing in', async () => {
    const fetchMock = queueFetch({ body: { token: 'jwt-1', user: technician } });
    const session = useSessionStore();

    await session.signIn('  technician@kestrelbay.example ', 'driftbench-demo');

    const [url, init] = fetchMock.mock.calls[0];
    expect(url).toBe('/api/auth/login');
    expect(init?.method).toBe('POST');
    expect(JSON.parse(String(init?.body))).toEqual({
      email: 'technician@kestrelbay.example',
      password: 'driftbench-demo',
    });
    expect(session.token).toBe('jwt-1');
    expect(session.user).toEqual(technician);
    expect(session.isAuthenticated).toBe(true);
    // the stored session also says whether an admin reset asks for a new password first
    expect(JSON.parse(localStorage.getItem(SESSION_KEY) ?? '{}')).toEqual({
      token: 'jwt-1',
      user: technician,
      mustChangePassword: false,
    });
  });

  it('sends the stored token on later requests', async () => {
    const fetchMock = queueFetch(
      { body: { token: 'jwt-2', user: technician } },
      { body: { user: technician } },
    );
    const session = useSessionStore();
    await session.signIn('technician@kestrelbay.example', 'driftbench-demo');
    session.verified = false;

    await session.restore();

    const headers = fetchMock.mock.calls[1][1]?.headers as Record<string, string>;
    expect(headers.Authorization).toBe('Bearer jwt-2');
  });

  it('clears token, user and storage on sign-out', async () => {
    queueFetch({ body: { token: 'jwt-1', user: technician } });
    const session = useSessionStore();
    await session.signIn('technician@kestrelbay.example', 'driftbench-demo');

    session.signOut();

    expect(session.token).toBeNull();
    expect(session.user).toBeNull();
    expect(session.isAuthenticated).toBe(false);
    expect(localStorage.getItem(SESSION_KEY)).toBeNull();
  });

  it('keeps nothing when the credentials are refused', async () => {
    queueFetch({
      status: 401,
      body: { error: { code: 'invalid-credentials', message: 'E-mail or password is wrong' } },
    });
    const session = useSessionStore();

    await expect(session.signIn('technician@kestrelbay.example', 'nope')).rejects.toMatchObject({
      status: 401,
      code: 'invalid-credentials',
    });
    expect(session.isAuthenticated).toBe(false);
    expect(localStorage.getItem(SESSION_KEY)).toBeNull();
  });

  it('restores a stored session by asking /me', async () => {
    localStorage.setItem(SESSION_KEY, 'bare-token');
    const fetchMock = queueFetch({ body: { user: technician } });
    const session = useSessionStore();

    expect(await session.restore()).toBeNull();
    expect(fetchMock.mock.calls[0][0]).toBe('/api/auth/me');
    expect(session.user).toEqual(technician);
    expect(session.verified).toBe(true);
  });

  it('ends a stored session that the server calls expired', async () => {
    localStorage.setItem(SESSION_KEY, JSON.stringify({ token: 'old', user: technician }));
    queueFetch({
      status: 401,
      body: { error: { code: 'token-expired', message: 'Session expired' } },
    });
    const session = useSessionStore();

    expect(await session.restore()).toBe('expired');
    expect(session.token).toBeNull();
    expect(localStorage.getItem(SESSION_KEY)).toBeNull();
  });

  it.each([
    ['admin', 'users:manage', true],
    ['lead', 'users:manage', false],
    ['engineer', 'studies:plan', true],
    ['technician', 'studies:plan', false],
    ['technician', 'captures:run', true],
    ['viewer', 'captures:run', false],
    ['viewer', 'read', true],
  ] as const)('a %s may %s: %s', async (role, action, expected) => {
    queueFetch({ body: { token: 't', user: { ...technician, role } } });
    const session = useSessionStore();
    await session.signIn('x@kestrelbay.example', 'driftbench-demo');
    expect(session.can(action)).toBe(expected);
  });
});
