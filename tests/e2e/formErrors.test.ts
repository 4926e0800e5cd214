import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, apiAs, launchChromium, openPage, type Session } from '../helpers/browser.js';

// The checkpoint dialog in a real Chromium: its exposure fields come from one per-kind table
// (shared/protocol/process.ts EXPOSURE_FIELDS) and its limits from the same schema the API parses,
// so a refused figure is worded with the schema's own range.

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let engineer: Session;

async function chooseKind(page: Page, words: string): Promise<void> {
  await page.locator('[data-field="process-kind"]').click();
  await page.locator('.el-select-dropdown__item:visible', { hasText: words }).first().click();
}

describe('a dialog’s field errors come from the shared schema', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    engineer = (await apiAs(server.url, 'engineer')).session;
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('asks for each process kind’s own figures and refuses a 50 °C reflow peak with the schema’s range', async () => {
    const { page, errors } = await openPage(browser, {
      viewport: { width: 1360, height: 900 },
      session: engineer,
    });
    await page.goto(`${server.url}/studies/1`);
    await page.click('button:has-text("Add checkpoint")');
    const dialog = page.locator('.el-dialog', { hasText: 'Add checkpoint' });
    await dialog.locator('input[name="name"]').waitFor();
    const figures = () =>
      dialog
        .locator('fieldset input[name]')
        .evaluateAll((inputs) => inputs.map((i) => i.getAttribute('name')));

    // A wash by default: its four figures and the solvent.
    expect(await figures()).toEqual([
      'process',
      'bathKHz',
      'temperatureC',
      'minutesPerSide',
      'cumulativeMinutes',
      'solvent',
    ]);

    await chooseKind(page, 'Reflow soldering');
    expect(await figures()).toEqual(['process', 'peakC', 'secondsAboveLiquidus', 'passes']);
    const peak = dialog.locator('input[name="peakC"]');
    // ReflowExposure takes a peak of 100 to 400 °C (shared/protocol/process.ts).
    expect(await peak.getAttribute('placeholder')).toBe('100 – 400 °C');
    await dialog.locator('input[name="name"]').fill('After reflow (1 pass)');
    await peak.fill('50');
    await dialog.locator('input[name="passes"]').fill('1');
    await dialog.locator('[data-action="save-checkpoint"]').click();
    // `has` takes a locator relative to each form item.
    const peakItem = dialog.locator('.el-form-item', { has: page.locator('input[name="peakC"]') });
    await expect
      .poll(() => peakItem.locator('.el-form-item__error').innerText())
      .toBe('Use 100 or more');
    await page.screenshot({ path: path.join(RESULTS, 'form-error-reflow-peak.png') });

    await peak.fill('245');
    await expect.poll(() => peakItem.locator('.el-form-item__error').count()).toBe(0);

    // A shock words its level and duration as a shock, with the unit chosen beside it.
    await chooseKind(page, 'Vibration or shock');
    await dialog.locator('label.el-radio-button', { hasText: 'Shock' }).click();
    const text = await dialog.locator('fieldset').innerText();
    expect(text).toContain('Peak level (g)');
    expect(text).toContain('Pulse duration');
    expect(await dialog.locator('[aria-label="Duration unit"]').count()).toBe(1);
    expect(errors).toEqual([]);
    await page.context().close();
  }, 90_000);
});
