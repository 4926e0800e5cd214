/**
 * The one door to the API: adds the session token, turns the server's error envelope
 * `{ error: { code, message, details? } }` into a typed ApiError, and reports a lost session
 * (401 after a token was sent) so the app can sign the user out and ask them to sign in again.
 */

export interface ApiErrorDetail {
  path: string;
  message: string;
}

export class ApiError extends Error {
  readonly status: number;
  readonly code: string;
  readonly details?: ApiErrorDetail[];
  /** Details the server sent as an object rather than a field list, e.g. `{ index, reason }` for a bad reading. */
  readonly context?: Record<string, unknown>;

  constructor(
    status: number,
    code: string,
    message: string,
    details?: ApiErrorDetail[],
    context?: Record<string, unknown>,
  ) {
    super(message);
    this.name = 'ApiError';
    this.status = status;
    this.code = code;
    this.details = details;
    this.context = context;
  }
}

/** 401 codes that mean "the session this token stood for is over". */
export const SESSION_LOST_CODES = [
  'token-expired',
  'account-disabled',
  'unauthorized',
  'session-ended',
] as const;

export interface HttpHooks {
  /** The current session token, or null when signed out. */
  getToken: () => string | null;
  /** Called once per request that failed because the session ended. */
  onSessionLost: (error: ApiError) => void;
}

const hooks: HttpHooks = {
  getToken: () => null,
  onSessionLost: () => {},
};

/** Wire the wrapper to the session (token) and to the router (what to do when it ends). */
export function configureHttp(partial: Partial<HttpHooks>): void {
  Object.assign(hooks, partial);
}

export interface RequestOptions {
  /** Let the caller handle a lost session itself (used by the session restore on start-up). */
  ignoreSessionLoss?: boolean;
  signal?: AbortSignal;
}

const GENERIC_MESSAGES: Record<number, string> = {
  400: 'The request was not accepted.',
  401: 'Please sign in to continue.',
  403: 'Your role does not allow this.',
  404: 'That item could not be found.',
  409: 'That change conflicts with the current data.',
  429: 'Too many attempts — please wait a moment and try again.',
};

function isErrorEnvelope(
  body: unknown,
): body is { error: { code: string; message: string; details?: unknown } } {
  if (typeof body !== 'object' || body === null || !('error' in body)) return false;
  const error = (body as { error: unknown }).error;
  return (
    typeof error === 'object' &&
    error !== null &&
    typeof (error as { code?: unknown }).code === 'string'
  );
}

function toDetails(value: unknown): ApiErrorDetail[] | undefined {
  if (!Array.isArray(value)) return undefined;
  return value
    .filter((d): d is { path: unknown; message: unknown } => typeof d === 'object' && d !== null)
    .map((d) => ({
      path: Array.isArray(d.path) ? d.path.join('.') : String(d.path ?? ''),
      message: String(d.message ?? ''),
    }));
}

/** Build an ApiError from a non-2xx response; never exposes raw bodies or stack traces. */
export function toApiError(status: number, body: unknown): ApiError {
  if (isErrorEnvelope(body)) {
    const { code, message, details } = body.error;
    const text = typeof message === 'string' && message ? message : GENERIC_MESSAGES[status];
    const context =
      typeof details === 'object' && details !== null && !Array.isArray(details)
        ? (details as Record<string, unknown>)
        : undefined;
    return new ApiError(
      status,
      code,
      text ?? 'Something went wrong on the server.',
      toDetails(details),
      context,
    );
  }
  const fallback =
    status >= 500
      ? 'The server could not complete the request. Please try again.'
      : GENERIC_MESSAGES[status];
  return new ApiError(
    status,
    status >= 500 ? 'server' : 'http',
    fallback ?? `The request failed (HTTP ${status}).`,
  );
}

export async function request<T>(
  method: string,
  path: string,
  body?: unknown,
  options: RequestOptions = {},
): Promise<T> {
  const token = hooks.getToken();
  const headers: Record<string, string> = { Accept: 'application/json' };
  if (body !== undefined) headers['Content-Type'] = 'application/json';
  if (token) headers.Authorization = `Bearer ${token}`;

  let response: Response;
  try {
    response = await fetch(path, {
      method,
      headers,
      body: body === undefined ? undefined : JSON.stringify(body),
      signal: options.signal,
    });
  } catch (cause) {
    if (cause instanceof DOMException && cause.name === 'AbortError') throw cause;
    if (cause instanceof DOMException && cause.name === 'TimeoutError') {
      throw new ApiError(
        0,
        'timeout',
        'The Driftbench server did not answer in time. Check the connection and try again.',
      );
    }
    throw new ApiError(
      0,
      'network',
      'Driftbench cannot reach its server. Check the connection and try again.',
    );
  }

  const text = await response.text();
  let parsed: unknown = undefined;
  if (text) {
    try {
      parsed = JSON.parse(text);
    } catch {
      parsed = undefined;
    }
  }

  if (!response.ok) {
    const error = toApiError(response.status, parsed);
    const sessionLost =
      response.status === 401 &&
      token !== null &&
      (SESSION_LOST_CODES as readonly string[]).includes(error.code);
    if (sessionLost && !options.ignoreSessionLoss) hooks.onSessionLost(error);
    throw error;
  }
  return parsed as T;
}

export const http = {
  get: <T>(path: string, options?: RequestOptions) => request<T>('GET', path, undefined, options),
  post: <T>(path: string, body?: unknown, options?: RequestOptions) =>
    request<T>('POST', path, body ?? {}, options),
  patch: <T>(path: string, body: unknown, options?: RequestOptions) =>
    request<T>('PATCH', path, body, options),
  put: <T>(path: string, body: unknown, options?: RequestOptions) =>
    request<T>('PUT', path, body, options),
  delete: <T>(path: string, options?: RequestOptions) =>
    request<T>('DELETE', path, undefined, options),
};
