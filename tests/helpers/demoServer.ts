import { afterAll, beforeAll } from 'vitest';
import type { RunningServer, ServerOptions } from '../../server/index.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import { startDemoServer } from './appServer.js';

/** A listening server of one test file (for WebSocket tests), with sign-in and JSON calls. */
export interface DemoServer {
  /** The server (set in beforeAll). */
  server: RunningServer;
  /** Signs in as the demo user of `role` afresh and returns the token. */
  login(role: string): Promise<string>;
  /** The token of `role`, signed in once and kept. */
  token(role: string): Promise<string>;
  /** One JSON request as `role` (its kept token): the status and the parsed body. */
  api(
    role: string,
    method: string,
    path: string,
    body?: unknown,
  ): Promise<{ status: number; body: any }>;
}

/**
 * Registers the file's `beforeAll` (a fresh database, the demo lab, a server on a free port with
 * `options`) and `afterAll` (close, drop), and returns the server with its helpers.
 */
export function useDemoServer(options: Partial<ServerOptions> = {}): DemoServer {
  const demo = {} as DemoServer;
  let stop: (() => Promise<void>) | undefined;
  const tokens = new Map<string, string>();
  beforeAll(async () => {
    ({ server: demo.server, stop } = await startDemoServer(options));
  });
  afterAll(async () => {
    await stop?.();
  });
  demo.login = async (role) => {
    const res = await fetch(`${demo.server.url}/api/auth/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: `${role}@${DEMO_DOMAIN}`, password: DEMO_PASSWORD }),
    });
    if (res.status !== 200) throw new Error(`login as ${role} failed: ${res.status}`);
    return ((await res.json()) as { token: string }).token;
  };
  demo.token = async (role) => {
    const kept = tokens.get(role) ?? (await demo.login(role));
    tokens.set(role, kept);
    return kept;
  };
  demo.api = async (role, method, path, body) => {
    const res = await fetch(`${demo.server.url}${path}`, {
      method,
      headers: {
        'content-type': 'application/json',
        authorization: `Bearer ${await demo.token(role)}`,
      },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
    return { status: res.status, body: await res.json() };
  };
  return demo;
}
