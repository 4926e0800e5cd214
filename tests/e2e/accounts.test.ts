import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, apiAs, launchChromium, openPage, pageToken, signIn } from '../helpers/browser.js';
import { DEMO_DOMAIN } from '../../server/db/seed.js';

// Issue 10, item 9 in the browser: the forced password change after an admin reset, the change
// password dialog on the rail, and sign-out ending the session on the server.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
const VIEWPORT = { width: 1360, height: 860 };

describe('accounts in the browser', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
  });
  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('after an admin reset, the next sign-in must choose a new password before anything else', async () => {
    const admin = await apiAs(server.url, 'admin');
    const users = await admin.call<{ users: Array<{ id: number; role: string }> }>(
      'GET',
      '/api/users',
    );
    const viewer = users.users.find((u) => u.role === 'viewer')!;
    await admin.call('POST', `/api/users/${viewer.id}/password-reset`, {
      temporaryPassword: 'temporary-bench-key',
    });

    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await page.goto(`${server.url}/studies`);
    await page.waitForURL(/\/sign-in/);
    await page.fill('input[name="email"]', `viewer@${DEMO_DOMAIN}`);
    await page.fill('input[name="password"]', 'temporary-bench-key');
    await page.press('input[name="password"]', 'Enter');
    await page.waitForURL(/\/account\/password/);
    expect(await page.locator('h1').innerText()).toBe('Choose a new password');
    // Nothing else opens meanwhile.
    await page.goto(`${server.url}/lab`);
    await page.waitForURL(/\/account\/password/);

    await page.fill('input[name="currentPassword"]', 'temporary-bench-key');
    await page.fill('input[name="newPassword"]', 'password1234');
    await page.fill('input[name="repeat"]', 'password1234');
    await page.locator('button[type="submit"]').click();
    await expect
      .poll(() => page.locator('body').innerText(), { timeout: 10_000 })
      .toContain('one of the most common passwords');
    await page.screenshot({ path: path.join(RESULTS, 'password-forced.png') });

    await page.fill('input[name="newPassword"]', 'viewer picks her own words');
    await page.fill('input[name="repeat"]', 'viewer picks her own words');
    await page.locator('button[type="submit"]').click();
    await page.waitForSelector('nav[aria-label="Main"]');
    expect(new URL(page.url()).pathname).toBe('/lab');
    expect(errors.filter((e) => !/40[13]/.test(e))).toEqual([]);
  });

  it('changes the password from the rail, and sign-out revokes the token on the server', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'engineer');
    await page.locator('button[title="Change password"]').click();
    const dialog = page.locator('.el-dialog');
    await dialog.waitFor();
    await dialog.locator('input[name="currentPassword"]').fill('driftbench-demo');
    await dialog.locator('input[name="newPassword"]').fill('engineer bench words 9');
    await dialog.locator('input[name="repeat"]').fill('engineer bench words');
    await dialog.locator('input[name="currentPassword"]').click();
    await expect
      .poll(() => dialog.innerText(), { timeout: 10_000 })
      .toContain('The two new passwords differ');
    await page.screenshot({ path: path.join(RESULTS, 'password-dialog.png') });
    await dialog.locator('input[name="repeat"]').fill('engineer bench words 9');
    await dialog.locator('button[type="submit"]').click();
    await expect
      .poll(() => page.locator('body').innerText(), { timeout: 10_000 })
      .toContain('Password changed');

    const token = await pageToken(page);
    expect(
      (await fetch(`${server.url}/api/auth/me`, { headers: { authorization: `Bearer ${token}` } }))
        .status,
    ).toBe(200);
    await page.locator('button[title="Sign out"]').click();
    await page.waitForURL(/\/sign-in/);
    expect(
      (await fetch(`${server.url}/api/auth/me`, { headers: { authorization: `Bearer ${token}` } }))
        .status,
    ).toBe(401);
    expect(errors).toEqual([]);
  });
});
