import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import {
  RESULTS,
  apiWith,
  launchChromium,
  login,
  openPage,
  type Session,
} from '../helpers/browser.js';

// The lab's equipment in a real Chromium (issue 14): an admin registers an instrument and records
// its calibration; the overdue thermometer's warning clears on the Lab page, the dashboard and
// the bench once its new certificate is recorded; retiring asks first; a lead records a
// reference's calibration; a viewer reads the history without any action.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let admin: Session;
let lead: Session;
let thermometerId: number;
const DESKTOP = { width: 1440, height: 900 };

function day(n: number): string {
  const now = new Date();
  return new Date(Date.UTC(now.getUTCFullYear(), now.getUTCMonth(), now.getUTCDate() + n))
    .toISOString()
    .slice(0, 10);
}

/** Fills an Element Plus date picker by its input's aria-label and closes its panel. */
async function pickDate(
  page: Page,
  scope: ReturnType<Page['locator']>,
  label: string,
  value: string,
): Promise<void> {
  const input = scope.locator(`input[aria-label="${label}"]`);
  // On a loaded machine the picker can still be opening when the date is typed and then drop it;
  // type it again until the field holds it.
  await expect
    .poll(async () => {
      if ((await input.inputValue()) !== value) {
        await input.fill(value);
        await input.press('Enter');
        // Close the picker's panel without Escape (which would close the dialog too).
        await scope.locator('.el-dialog__title').click();
      }
      return input.inputValue();
    })
    .toBe(value);
  void page;
}

async function recordCalibration(
  page: Page,
  fields: { certificate: string; issuedBy: string; dueOn: string; uncertainty?: string },
) {
  await page.click('[data-action="record-calibration"]');
  const dialog = page.locator('.el-dialog', { hasText: 'Record a calibration' });
  await dialog.waitFor();
  await dialog.locator('input[name="certificate"]').fill(fields.certificate);
  await dialog.locator('input[name="issuedBy"]').fill(fields.issuedBy);
  await pickDate(page, dialog, 'Next calibration due', fields.dueOn);
  if (fields.uncertainty)
    await dialog.locator('input[name="uncertainty"]').fill(fields.uncertainty);
  return dialog;
}

describe('the lab’s equipment pages', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    admin = await login(server.url, 'admin');
    lead = await login(server.url, 'lead');
    const { instruments } = await apiWith(server.url, admin.token)<{
      instruments: Array<{ id: number; name: string }>;
    }>('GET', '/api/instruments');
    thermometerId = instruments.find((i) => i.name === 'Bench thermometer T-1')!.id;
  }, 120_000);
  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('lets an admin register an instrument and record its first calibration', async () => {
    const { page, errors } = await openPage(browser, { viewport: DESKTOP, session: admin });
    await page.goto(`${server.url}/lab`);
    await page.click('[data-action="add-instrument"]');
    const dialog = page.locator('.el-dialog', { hasText: 'Register an instrument' });
    await dialog.locator('[data-action="save-instrument"]').click();
    await dialog.locator('text=Name the instrument').waitFor();
    await dialog.locator('input[name="name"]').fill('Counter C-7');
    await dialog.locator('input[name="maker"]').fill('Driftbench workshop');
    await dialog.locator('input[name="serial"]').fill('DB-CNT-0007');
    await dialog.locator('[data-action="save-instrument"]').click();
    await page.locator('a[data-lab="instrument-link"]', { hasText: 'Counter C-7' }).click();
    await page.waitForURL(/\/lab\/instruments\/\d+$/);
    await page.waitForSelector('h1:has-text("Counter C-7")');
    expect(await page.locator('[data-testid="equipment-standing"]').innerText()).toContain(
      'No due date',
    );
    expect(await page.locator('body').innerText()).toContain('No calibration recorded yet');

    const record = await recordCalibration(page, {
      certificate: 'DBX-C-7001',
      issuedBy: 'Driftbench demo calibration lab',
      dueOn: day(365),
      uncertainty: '±1 × 10⁻¹⁰ (k = 2)',
    });
    await page.screenshot({ path: path.join(RESULTS, 'equipment-record-dialog.png') });
    await record.locator('[data-action="save-calibration"]').click();
    await expect
      .poll(() => page.locator('[data-testid="equipment-standing"]').innerText())
      .toContain('Calibration valid');
    const history = page.locator('[data-testid="calibration-history"]');
    await expect.poll(() => history.innerText()).toContain('DBX-C-7001');
    expect(await history.innerText()).toContain('Ada Admin');
    await page.screenshot({ path: path.join(RESULTS, 'equipment-instrument.png'), fullPage: true });
    expect(errors).toEqual([]);
    await page.context().close();
  }, 90_000);

  it('clears the thermometer’s overdue warning on the Lab page, the dashboard and the bench once a calibration is recorded', async () => {
    const { page, errors } = await openPage(browser, { viewport: DESKTOP, session: admin });
    await page.goto(`${server.url}/`);
    const dashboardItem = page.locator('[data-testid="calibration-item"]', {
      hasText: 'Bench thermometer T-1',
    });
    await dashboardItem.waitFor();
    expect(await dashboardItem.innerText()).toMatch(/Overdue by 5 days/);
    await page.goto(`${server.url}/bench`);
    await expect
      .poll(() => page.locator('[data-testid="thermometer-warning"]').innerText())
      .toMatch(/Bench thermometer T-1: calibration overdue by 5 days/);

    await page.goto(`${server.url}/lab`);
    const row = page.locator('.el-table__row', { hasText: 'Bench thermometer T-1' });
    await row.waitFor();
    expect(await row.innerText()).toContain('Overdue by 5 days');
    expect(await page.locator('.page-header').innerText()).toMatch(
      /Calibration needs attention: 1 overdue/,
    );
    await page.screenshot({ path: path.join(RESULTS, 'equipment-lab-before.png'), fullPage: true });
    await row.locator('a[data-lab="instrument-link"]').click();
    await page.waitForSelector('h1:has-text("Bench thermometer T-1")');
    const dialog = await recordCalibration(page, {
      certificate: 'DBX-T-0502',
      issuedBy: 'Driftbench demo calibration lab',
      dueOn: day(365),
      uncertainty: '±0.05 °C (k = 2)',
    });
    await dialog.locator('[data-action="save-calibration"]').click();
    await expect
      .poll(() => page.locator('[data-testid="equipment-standing"]').innerText())
      .toContain('Calibration valid');
    // The history keeps the old certificate below the new one.
    const certificates = await page
      .locator('[data-testid="calibration-history"] .el-table__row')
      .allInnerTexts();
    expect(certificates.map((r) => /DBX-T-\d+/.exec(r)?.[0])).toEqual(['DBX-T-0502', 'DBX-T-0457']);

    await page.goto(`${server.url}/lab`);
    await expect
      .poll(() => page.locator('.el-table__row', { hasText: 'Bench thermometer T-1' }).innerText())
      .toContain('Calibration valid');
    expect(await page.locator('.page-header').innerText()).not.toContain('overdue');
    await page.goto(`${server.url}/`);
    await page.locator('#calibration-title').waitFor();
    await page.waitForLoadState('networkidle');
    expect(
      await page
        .locator('[data-testid="calibration-item"]', { hasText: 'Bench thermometer T-1' })
        .count(),
    ).toBe(0);

    // The bench: no warning for the thermometer any more, and it fills the ambient field.
    await page.goto(`${server.url}/bench`);
    await page.locator('[data-action="read-thermometer"]').waitFor();
    expect(await page.locator('[data-testid="thermometer-warning"]').count()).toBe(0);
    await page.click('[data-action="read-thermometer"]');
    await expect
      .poll(() => page.locator('[data-field="ambient"] input').inputValue())
      .toMatch(/^2[23]\.\d$/); // the simulated swing, 22.8–23.2 °C
    expect(await page.locator('[data-testid="thermometer"]').innerText()).toMatch(
      /Read from Bench thermometer T-1: 2[23]\.\d\d °C/,
    );
    await page.screenshot({ path: path.join(RESULTS, 'equipment-bench-thermometer.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  }, 120_000);

  it('asks for a reason before retiring, then keeps the instrument off the lab list and the bench', async () => {
    const api = apiWith(server.url, admin.token);
    const spare = await api<{ instrument: { id: number } }>('POST', '/api/instruments', {
      name: 'Counter C-9',
      kind: 'counter',
      calibrationDue: day(200),
    });
    const { page, errors } = await openPage(browser, { viewport: DESKTOP, session: admin });
    await page.goto(`${server.url}/lab/instruments/${spare.instrument.id}`);
    await page.click('[data-action="retire"]');
    const box = page.locator('.el-message-box', { hasText: 'Retire “Counter C-9”?' });
    await box.waitFor();
    await box.locator('button', { hasText: 'Retire' }).click();
    await box.locator('text=Give the reason it leaves service').waitFor();
    await box.locator('input').fill('Display failed; parts kept for C-7.');
    await box.locator('button', { hasText: 'Retire' }).click();
    await page.waitForSelector('text=Display failed; parts kept for C-7.');
    expect(await page.locator('[data-action="record-calibration"]').count()).toBe(0);

    await page.goto(`${server.url}/lab`);
    await page.locator('a[data-lab="instrument-link"]').first().waitFor();
    expect(
      await page.locator('a[data-lab="instrument-link"]', { hasText: 'Counter C-9' }).count(),
    ).toBe(0);
    await page.click('[data-action="show-retired"]');
    await page
      .locator('.el-table__row', { hasText: 'Counter C-9' })
      .locator('text=retired')
      .waitFor();
    await page.goto(`${server.url}/bench`);
    await page.click('[data-field="instrument"] .el-select__wrapper');
    const options = await page.locator('.el-select-dropdown__item:visible').allInnerTexts();
    expect(options).not.toContain('Counter C-9');
    expect(options).toContain('Counter C-1');
    expect(errors).toEqual([]);
    await page.context().close();
  }, 90_000);

  it('lets a lead record a reference calibration, and shows a viewer the history without any action', async () => {
    const { page, errors } = await openPage(browser, { viewport: DESKTOP, session: lead });
    await page.goto(`${server.url}/lab`);
    await page.locator('a[data-lab="reference-link"]').first().click();
    await page.waitForURL(/\/lab\/references\/\d+$/);
    expect(await page.locator('[data-testid="lab-reference"]').innerText()).toBe('Lab reference');
    const dialog = await recordCalibration(page, {
      certificate: 'DBX-R-0150',
      issuedBy: 'Driftbench demo calibration lab',
      dueOn: day(400),
    });
    await dialog.locator('input[name="fractionalOffset"]').fill('');
    await dialog.locator('[data-action="save-calibration"]').click();
    await dialog.locator('text=Give the offset found').waitFor();
    await dialog.locator('input[name="fractionalOffset"]').fill('1.5e-12');
    await dialog.locator('input[name="standardUncertainty"]').fill('8e-12');
    await dialog.locator('[data-action="save-calibration"]').click();
    await expect
      .poll(() => page.locator('[data-testid="calibration-history"]').innerText())
      .toContain('DBX-R-0150');
    expect(await page.locator('.equipment__facts').first().innerText()).toContain('+1.5 × 10⁻¹²');
    await page.screenshot({ path: path.join(RESULTS, 'equipment-reference.png'), fullPage: true });
    expect(errors).toEqual([]);
    await page.context().close();

    const viewer = await login(server.url, 'viewer');
    const seen = await openPage(browser, { viewport: DESKTOP, session: viewer });
    await seen.page.goto(`${server.url}/lab/instruments/${thermometerId}`);
    await seen.page.locator('[data-testid="calibration-history"]').waitFor();
    expect(await seen.page.locator('.equipment [data-action]').count()).toBe(0);
    expect(seen.errors).toEqual([]);
    await seen.page.context().close();
  }, 90_000);

  it.each([
    ['desktop', { width: 1440, height: 900 }],
    ['tablet', { width: 820, height: 1180 }],
    ['phone', { width: 390, height: 844 }],
  ])(
    'draws the equipment pages on a %s without sideways scrolling',
    async (name, viewport) => {
      const { page, errors } = await openPage(browser, { viewport, session: admin });
      for (const [shot, url] of [
        ['lab', '/lab'],
        ['instrument', `/lab/instruments/${thermometerId}`],
        ['reference', '/lab/references/1'],
      ] as const) {
        await page.goto(`${server.url}${url}`);
        await page.locator('#main h1').waitFor();
        await page.waitForLoadState('networkidle');
        expect(
          await page.evaluate(
            'document.documentElement.scrollWidth - document.documentElement.clientWidth',
          ),
        ).toBeLessThanOrEqual(0);
        await page.screenshot({
          path: path.join(RESULTS, `equipment-${shot}-${name}.png`),
          fullPage: true,
        });
      }
      expect(errors).toEqual([]);
      await page.context().close();
    },
    90_000,
  );
});
