import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, launchChromium, openPage, signIn } from '../helpers/browser.js';

// The first five minutes of the demo (issue "a demo lab with a story"): a viewer signs in to the
// seeded lab and sees verdicts in the matrix — the tuning fork exceeding — and a capture on air.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;

describe('the demo lab as a viewer sees it', () => {
  beforeAll(async () => {
    server = await startTestServer({ demoStory: true });
    browser = await launchChromium();
  }, 180_000);
  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows a capture on air on the dashboard and opens it live', async () => {
    const { page, errors } = await openPage(browser);
    await signIn(page, server.url, 'viewer');
    const onAir = page.locator('.dashboard__live-link').first();
    await onAir.waitFor();
    expect(await onAir.textContent()).toContain('Y1 16 MHz crystal');
    await page.screenshot({ path: path.join(RESULTS, 'demo-dashboard.png'), fullPage: true });
    await onAir.click();
    await page.waitForURL(/\/captures\/\d+\/live/);
    expect(errors).toEqual([]);
  });

  it('shows the wash study matrix with verdicts: the tuning fork exceeds after the over-exposure', async () => {
    const { page, errors } = await openPage(browser, { viewport: { width: 1440, height: 1000 } });
    await signIn(page, server.url, 'viewer', '/studies');
    await page.getByText('Aqueous ultrasonic wash', { exact: false }).first().click();
    await page.waitForSelector('[data-cell="compared"]');
    const fork = page.locator('tr', { hasText: 'Y3 32.768 kHz tuning fork' });
    const verdicts = await fork
      .locator('td')
      .evaluateAll((cells) => cells.map((c) => c.getAttribute('data-verdict')));
    expect(verdicts.slice(1)).toEqual(['within', 'exceeds', 'exceeds']);
    expect(await page.locator('td[data-verdict="inconclusive"]').count()).toBe(1);
    expect(await page.locator('td[data-verdict="within"]').count()).toBeGreaterThanOrEqual(10);
    await page.screenshot({ path: path.join(RESULTS, 'demo-matrix.png'), fullPage: true });
    expect(errors).toEqual([]);
  });
});
