import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import {
  RESULTS,
  apiWith,
  launchChromium,
  openPage,
  pageToken,
  signIn,
} from '../helpers/browser.js';

// The shell in a real Chromium against the built client and a seeded database: sign-in, the
// role-aware rail, dashboard counts, both themes, and no console errors along the way.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;

const VIEWPORT = { width: 1360, height: 860 };

async function navLabels(page: Page): Promise<string[]> {
  return (await page.locator('nav[aria-label="Main"] a').allInnerTexts()).map((t) => t.trim());
}

describe('the Driftbench shell', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('signs a technician in and shows the dashboard without console errors', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await page.goto(`${server.url}/`);
    await page.waitForSelector('input[name="email"]');
    await page.screenshot({ path: path.join(RESULTS, 'sign-in.png') });

    await signIn(page, server.url, 'technician');
    expect(await navLabels(page)).toEqual([
      'Dashboard',
      'Studies',
      'Bench',
      'Captures',
      'Compare',
      'Links',
      'Lab',
      'Help',
    ]);
    await expect.poll(() => page.locator('[data-count="studies"]').innerText()).toMatch(/^\d+$/);
    expect(Number(await page.locator('[data-count="duts"]').innerText())).toBeGreaterThan(0);
    await expect.poll(() => page.locator('.health-line').innerText()).toMatch(/Database connected/);
    await expect.poll(() => page.locator('body').innerText()).toContain('No captures are running');
    expect(await page.locator('.nav-rail__name').innerText()).toBe('Tomas Technician');
    await page.screenshot({ path: path.join(RESULTS, 'shell-technician.png') });

    // A capture started elsewhere appears on air without a reload, and leaves when finished.
    const api = apiWith(server.url, await pageToken(page));
    const study = await api<{ duts: { id: number }[]; checkpoints: { id: number }[] }>(
      'GET',
      '/api/studies/1',
    );
    const capture = await api<{ id: number }>('POST', '/api/captures', {
      dutId: study.duts[0].id,
      checkpointId: study.checkpoints[0].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
    });
    await expect
      .poll(() => page.locator('body').innerText(), { timeout: 10_000 })
      .toContain('Y1 16 MHz crystal');
    await api('POST', `/api/captures/${capture.id}/finish`);
    await expect
      .poll(() => page.locator('body').innerText(), { timeout: 10_000 })
      .toContain('No captures are running');

    await page.goto(`${server.url}/lab`);
    await page.waitForSelector('text=GPS 10 MHz reference');
    expect(await page.locator('body').innerText()).toMatch(/Overdue by \d+ day/);
    await page.screenshot({ path: path.join(RESULTS, 'lab-technician.png'), fullPage: true });

    await page.goto(`${server.url}/users`);
    await page.waitForSelector('text=This page is not part of your role');
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('shows Users to an admin, in either theme', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'admin');
    expect(await navLabels(page)).toEqual([
      'Dashboard',
      'Studies',
      'Bench',
      'Captures',
      'Compare',
      'Links',
      'Lab',
      'Users',
      'Outbox',
      'Help',
    ]);

    await page.click('nav[aria-label="Main"] >> text=Users');
    await page.waitForSelector('text=admin@kestrelbay.example');
    await page.screenshot({ path: path.join(RESULTS, 'users-admin.png') });

    await page.click('button:has-text("Add person")');
    const dialog = page.locator('.el-dialog');
    await dialog.locator('input').nth(0).fill('Nia Bench');
    await dialog.locator('input').nth(1).fill('nia@kestrelbay.example');
    await dialog.locator('input[type="password"]').fill('short');
    await dialog.locator('button:has-text("Add person")').click();
    await dialog.locator('text=must be at least 12 characters').waitFor();
    await page.screenshot({ path: path.join(RESULTS, 'users-add-dialog.png') });
    await dialog.locator('input[type="password"]').fill('a-long-enough-secret');
    await dialog.locator('button:has-text("Add person")').click();
    await page.waitForSelector('td >> text=nia@kestrelbay.example');

    await page.click('button[aria-label="Dark theme"]');
    expect(await page.evaluate("document.documentElement.classList.contains('dark')")).toBe(true);
    await page.click('nav[aria-label="Main"] >> text=Dashboard');
    await expect.poll(() => page.locator('[data-count="studies"]').innerText()).toMatch(/^\d+$/);
    await page.screenshot({ path: path.join(RESULTS, 'shell-admin-dark.png') });

    await page.reload();
    await page.waitForSelector('nav[aria-label="Main"]');
    expect(await page.evaluate("document.documentElement.classList.contains('dark')")).toBe(true);
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('lists studies for an engineer and sends a lost session back to sign-in', async () => {
    // The only console error allowed is the browser's own note about the refused /me call.
    const { page, errors } = await openPage(browser, {
      viewport: VIEWPORT,
      ignoreErrors: [/status of 401/],
    });
    await signIn(page, server.url, 'engineer');
    await page.click('nav[aria-label="Main"] >> text=Studies');
    await page.waitForSelector('.el-table__row');
    expect(await page.locator('button:has-text("New study")').isVisible()).toBe(true);
    await page.screenshot({ path: path.join(RESULTS, 'studies-engineer.png') });

    // A token the server no longer accepts: the next page load ends the session politely.
    await page.evaluate(`
      localStorage.setItem('driftbench.session', JSON.stringify({ token: 'not-a-valid-token', user: null }));
      localStorage.setItem('driftbench.theme', 'dark');
    `);
    await page.goto(`${server.url}/lab`);
    await page.waitForURL(
      (url) =>
        url.pathname === '/sign-in' &&
        url.searchParams.get('next') === '/lab' &&
        url.searchParams.get('reason') === 'expired',
    );
    await page.waitForSelector('text=Your session has expired — please sign in again');
    await page.screenshot({ path: path.join(RESULTS, 'sign-in-expired-dark.png') });

    expect(errors).toEqual([]);
    await page.context().close();
  });
});
