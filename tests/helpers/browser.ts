import { mkdirSync } from 'node:fs';
import path from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';

// What the Chromium tests share: the browser launch, a page that collects console errors, and
// signing in as a demo user, either through the sign-in form or through the API.

/** Where the browser tests save their screenshots (git-ignored). */
export const RESULTS = path.resolve('test-results');

/** A signed-in session as POST /api/auth/login answers it (and the client keeps it). */
export interface Session {
  token: string;
  user: unknown;
}

/** A page with the console errors and uncaught exceptions seen on it so far. */
export interface Watched {
  page: Page;
  errors: string[];
}

export interface OpenPageOptions {
  viewport?: { width: number; height: number };
  colorScheme?: 'light' | 'dark';
  /** Signed in from the first load: the session is put into localStorage before any script runs. */
  session?: Session;
  /** Console errors that are expected and left out of `errors`. */
  ignoreErrors?: RegExp[];
}

/** Headless Chromium for the browser tests; also makes sure test-results/ exists. */
export async function launchChromium(): Promise<Browser> {
  mkdirSync(RESULTS, { recursive: true });
  return chromium.launch({
    executablePath: '/usr/bin/chromium',
    args: [
      '--headless',
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
    ],
  });
}

/** A page in a fresh context; console errors and page errors are collected in `errors`. */
export async function openPage(browser: Browser, opts: OpenPageOptions = {}): Promise<Watched> {
  const context = await browser.newContext({
    viewport: opts.viewport ?? { width: 1360, height: 900 },
    colorScheme: opts.colorScheme ?? 'light',
  });
  if (opts.session) {
    await context.addInitScript(
      `localStorage.setItem('driftbench.session', ${JSON.stringify(JSON.stringify(opts.session))})`,
    );
  }
  const page = await context.newPage();
  const errors: string[] = [];
  const ignored = opts.ignoreErrors ?? [];
  page.on('console', (msg) => {
    if (msg.type() === 'error' && !ignored.some((re) => re.test(msg.text())))
      errors.push(msg.text());
  });
  page.on('pageerror', (err) => errors.push(err.message));
  return { page, errors };
}

/**
 * Opens `next` (a signed-out visit lands on the sign-in page) and signs in as the demo user of
 * `role` through the form; returns once the main navigation shows.
 */
export async function signIn(page: Page, baseUrl: string, role: string, next = '/'): Promise<void> {
  await page.goto(`${baseUrl}${next}`);
  await page.waitForURL(/\/sign-in/);
  await page.fill('input[name="email"]', `${role}@${DEMO_DOMAIN}`);
  await page.fill('input[name="password"]', DEMO_PASSWORD);
  await page.press('input[name="password"]', 'Enter');
  await page.waitForSelector('nav[aria-label="Main"]');
}

/** The bearer token of the session a page is signed in with. */
export async function pageToken(page: Page): Promise<string> {
  return (await page.evaluate(
    "JSON.parse(localStorage.getItem('driftbench.session') ?? '{}').token",
  )) as string;
}

/** A JSON call to the API; throws with the status and body when the answer is not 2xx. */
export async function apiCall<T>(
  baseUrl: string,
  method: string,
  url: string,
  token: string | null,
  body?: unknown,
): Promise<T> {
  const response = await fetch(`${baseUrl}${url}`, {
    method,
    headers: {
      'content-type': 'application/json',
      ...(token ? { authorization: `Bearer ${token}` } : {}),
    },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const json = (await response.json()) as T;
  if (!response.ok) throw new Error(`${method} ${url}: ${response.status} ${JSON.stringify(json)}`);
  return json;
}

/** Signs in as the demo user of `role` through POST /api/auth/login. */
export function login(baseUrl: string, role: string): Promise<Session> {
  return apiCall<Session>(baseUrl, 'POST', '/api/auth/login', null, {
    email: `${role}@${DEMO_DOMAIN}`,
    password: DEMO_PASSWORD,
  });
}

/** JSON calls to the API with one bearer token. */
export type Api = <T = unknown>(method: string, url: string, body?: unknown) => Promise<T>;

/** API calls with a token already in hand (one signed in through the API, or taken from a page). */
export function apiWith(baseUrl: string, token: string): Api {
  return (method, url, body) => apiCall(baseUrl, method, url, token, body);
}

/** Signs in as `role` through the API: the session (for `openPage`) and calls made with its token. */
export async function apiAs(
  baseUrl: string,
  role: string,
): Promise<{ session: Session; call: Api }> {
  const session = await login(baseUrl, role);
  return { session, call: apiWith(baseUrl, session.token) };
}
