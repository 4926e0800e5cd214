// @vitest-environment happy-dom
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { ApiError, configureHttp, http } from '../../../src/api/http';
import { queueFetch } from './helpers';

describe('http wrapper', () => {
  const onSessionLost = vi.fn();
  let token: string | null = 'jwt';

  beforeEach(() => {
    token = 'jwt';
    onSessionLost.mockReset();
    configureHttp({ getToken: () => token, onSessionLost });
  });
  afterEach(() => vi.unstubAllGlobals());

  it('adds the bearer token and returns parsed JSON', async () => {
    const fetchMock = queueFetch({ body: { studies: [] } });
    await expect(http.get('/api/studies')).resolves.toEqual({ studies: [] });
    const headers = fetchMock.mock.calls[0][1]?.headers as Record<string, string>;
    expect(headers.Authorization).toBe('Bearer jwt');
  });

  it('maps the error envelope to a typed ApiError with details', async () => {
    queueFetch({
      status: 400,
      body: {
        error: {
          code: 'validation',
          message: 'The request is not valid',
          details: [{ path: 'email', message: 'Invalid e-mail' }],
        },
      },
    });
    const error = await http.post('/api/users', {}).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(ApiError);
    expect(error).toMatchObject({
      status: 400,
      code: 'validation',
      message: 'The request is not valid',
      details: [{ path: 'email', message: 'Invalid e-mail' }],
    });
    expect(onSessionLost).not.toHaveBeenCalled();
  });

  it('reports a lost session on 401 token-expired when a token was sent', async () => {
    queueFetch({
      status: 401,
      body: { error: { code: 'token-expired', message: 'Your session has expired' } },
    });
    await expect(http.get('/api/dashboard')).rejects.toMatchObject({
      status: 401,
      code: 'token-expired',
    });
    expect(onSessionLost).toHaveBeenCalledTimes(1);
    expect(onSessionLost.mock.calls[0][0]).toMatchObject({ code: 'token-expired' });
  });

  it('does not report a lost session when no token was sent', async () => {
    token = null;
    queueFetch({
      status: 401,
      body: { error: { code: 'unauthorized', message: 'Sign in first' } },
    });
    await expect(http.get('/api/dashboard')).rejects.toMatchObject({ code: 'unauthorized' });
    expect(onSessionLost).not.toHaveBeenCalled();
  });

  it('does not treat wrong credentials as a lost session', async () => {
    queueFetch({ status: 401, body: { error: { code: 'invalid-credentials', message: 'Wrong' } } });
    await expect(http.post('/api/auth/login', {})).rejects.toMatchObject({
      code: 'invalid-credentials',
    });
    expect(onSessionLost).not.toHaveBeenCalled();
  });

  it('turns a network failure into a readable ApiError', async () => {
    queueFetch(new TypeError('Failed to fetch'));
    const error = await http.get('/api/health').catch((e: unknown) => e);
    expect(error).toMatchObject({ status: 0, code: 'network' });
    expect((error as ApiError).message).toMatch(/cannot reach/);
  });

  it('gives a readable message for a non-JSON server failure', async () => {
    vi.stubGlobal(
      'fetch',
      vi.fn(async () => new Response('<html>Bad gateway</html>', { status: 502 })),
    );
    const error = await http.get('/api/dashboard').catch((e: unknown) => e);
    expect(error).toMatchObject({ status: 502, code: 'server' });
    expect((error as ApiError).message).not.toMatch(/html/i);
  });
});
