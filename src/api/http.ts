/**
 * The one door to the API: adds the session token, turns the server's error envelope
 * `{ error: { code, message, details? } }` into a typed ApiError, and reports a lost session
 * (401 after a token was sent) so the app can sign the user out and ask them to sign in again.
 * `callRoute` calls a route by its contract key and types the answer by its response schema.
 */
import type { RESPONSES, ResponseKey, ResponseOf } from '../../shared/protocol/responses';

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
  /** The content type of a binary body (a `Uint8Array` body is sent as it is, not as JSON). */
  contentType?: string;
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
  const bytes = body instanceof Uint8Array ? (body as Uint8Array<ArrayBuffer>) : null;
  if (body !== undefined)
    headers['Content-Type'] = bytes
      ? (options.contentType ?? 'application/octet-stream')
      : 'application/json';
  if (token) headers.Authorization = `Bearer ${token}`;

  let response: Response;
  try {
    response = await fetch(path, {
      method,
      headers,
      body: body === undefined ? undefined : (bytes ?? JSON.stringify(body)),
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

type PathOf<K extends string> = K extends `${string} ${infer P}` ? P : never;
type ParamNames<P extends string> = P extends `${string}:${infer Name}/${infer Rest}`
  ? Name | ParamNames<Rest>
  : P extends `${string}:${infer Name}`
    ? Name
    : never;
/** The `:name` segments of route `K`'s path (`'GET /api/studies/:id'` → `{ id }`). */
export type RouteParams<K extends string> = Record<ParamNames<PathOf<K>>, string | number>;
/** The routes `callRoute` calls: every one that answers JSON or nothing (204), not a file or a CSV. */
export type CallableRoute = {
  [K in ResponseKey]: (typeof RESPONSES)[K] extends 'csv' | 'file' ? never : K;
}[ResponseKey];
/** What route `K` answers: its response schema's type, or nothing for a 204 route. */
export type RouteAnswer<K extends ResponseKey> = (typeof RESPONSES)[K] extends 'no-content'
  ? void
  : ResponseOf<K>;

/** A query string's values; undefined and null ones are left out. */
export type QueryValues = Record<string, string | number | boolean | null | undefined>;

/** `?a=1&b=x` from `values` (undefined and null left out), or '' when none is left. */
export function queryString(values: QueryValues = {}): string {
  const q = new URLSearchParams();
  for (const [k, v] of Object.entries(values))
    if (v !== undefined && v !== null) q.set(k, String(v));
  const s = q.toString();
  return s ? `?${s}` : '';
}

/** The path of route `key` (a line of ROUTES) with its `:name` segments filled in, plus `query`. */
export function routePath<K extends string>(
  key: K,
  params: RouteParams<K>,
  query?: QueryValues,
): string {
  const path = key
    .slice(key.indexOf(' ') + 1)
    .replace(/:([A-Za-z]+)/g, (_, name: string) =>
      encodeURIComponent(String((params as Record<string, string | number>)[name])),
    );
  return path + queryString(query);
}

export interface RouteCall extends RequestOptions {
  /** The JSON body (a POST without one sends `{}`). */
  body?: unknown;
  query?: QueryValues;
}

/**
 * Calls route `key` of the contract (`'POST /api/studies/:id/submit'`, the same key as in ROUTES
 * and RESPONSES) with its path parameters; the answer is typed by the route's response schema
 * (`z.infer` of its line in shared/protocol/responses.ts; nothing for a 204), so no client type
 * restates it.
 */
export function callRoute<K extends CallableRoute>(
  key: K,
  params: RouteParams<K>,
  { body, query, ...options }: RouteCall = {},
): Promise<RouteAnswer<K>> {
  const method = key.slice(0, key.indexOf(' '));
  const sent = body === undefined && method === 'POST' ? {} : body;
  return request<RouteAnswer<K>>(method, routePath(key, params, query), sent, options);
}

/**
 * Fetches a file the API serves (a CSV, an attachment's bytes) with `token`; a refusal becomes
 * the same ApiError as any other call's.
 */
export async function fetchBlob(
  path: string,
  token: string | null,
  signal?: AbortSignal,
): Promise<Blob> {
  const response = await fetch(path, {
    headers: token ? { Authorization: `Bearer ${token}` } : {},
    signal,
  });
  if (!response.ok) {
    let body: unknown;
    try {
      body = await response.json();
    } catch {
      body = undefined;
    }
    throw toApiError(response.status, body);
  }
  return response.blob();
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
