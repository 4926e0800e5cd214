// @vitest-environment happy-dom
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import {
  ApiError,
  callRoute,
  configureHttp,
  http,
  queryString,
  routePath,
} from '../../../src/api/http';
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

describe('calling a route by its contract key', () => {
  beforeEach(() => configureHttp({ getToken: () => 'jwt', onSessionLost: () => {} }));
  afterEach(() => vi.unstubAllGlobals());

  it('fills the path parameters and leaves empty query values out', () => {
    expect(routePath('GET /api/studies/:id/cells', { id: 4 }, { dutId: 7, checkpointId: 9 })).toBe(
      '/api/studies/4/cells?dutId=7&checkpointId=9',
    );
    expect(routePath('GET /api/studies/:id/audit', { id: 2 }, { limit: 25, cursor: null })).toBe(
      '/api/studies/2/audit?limit=25',
    );
    expect(routePath('GET /api/captures/import/progress/:key', { key: 'a b/c' })).toBe(
      '/api/captures/import/progress/a%20b%2Fc',
    );
    expect(queryString({})).toBe('');
  });

  it('uses the route’s method, sends {} for a POST without a body and returns the parsed answer', async () => {
    const fetchMock = queueFetch({ body: { id: 3, status: 'in-progress' } });
    await expect(callRoute('POST /api/studies/:id/start', { id: 3 })).resolves.toEqual({
      id: 3,
      status: 'in-progress',
    });
    const [url, init] = fetchMock.mock.calls[0];
    expect(url).toBe('/api/studies/3/start');
    expect(init?.method).toBe('POST');
    expect(init?.body).toBe('{}');
  });

  it('sends a GET without a body and a PATCH with its JSON body', async () => {
    const fetchMock = queueFetch({ body: { captures: [] } }, { body: { user: { id: 5 } } });
    await callRoute(
      'GET /api/studies/:id/cells',
      { id: 1 },
      { query: { dutId: 2, checkpointId: 3 } },
    );
    await callRoute('PATCH /api/users/:id', { id: 5 }, { body: { name: 'Bea Bench' } });
    expect(fetchMock.mock.calls[0][1]?.method).toBe('GET');
    expect(fetchMock.mock.calls[0][1]?.body).toBeUndefined();
    expect(fetchMock.mock.calls[1][0]).toBe('/api/users/5');
    expect(fetchMock.mock.calls[1][1]?.method).toBe('PATCH');
    expect(fetchMock.mock.calls[1][1]?.body).toBe('{"name":"Bea Bench"}');
  });
});
