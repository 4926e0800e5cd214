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

// The link test page against the simulators (talk-only counter, SCPI counter, SPI bridge), and
// a link profile saved for an instrument from the Lab page.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;

const VIEWPORT = { width: 1360, height: 1000 };

async function chooseDevice(page: Page, label: string): Promise<void> {
  await page.click('[data-device]');
  await page.click(`.el-select-dropdown__item:visible >> text="${label}"`);
}

const number = (text: string) => Number(text.replace(/[\s\u2009]/g, '').replace('\u2212', '-'));

describe('the link test page', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('streams, queries and transfers over the simulators for an engineer', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'engineer', '/sign-in');
    await page.goto(`${server.url}/links`);
    await page.waitForSelector('h1:has-text("Links")');

    // Talk-only counter at 10× time: a reading every 0.1 s, near the 16 MHz crystal's nominal.
    await chooseDevice(page, 'Counter, talk-only stream');
    await page.click('[data-action="connect"]');
    await page.waitForSelector('[data-state="connected"]');
    await expect
      .poll(() => page.locator('[data-reading]').count(), { timeout: 8000 })
      .toBeGreaterThanOrEqual(5);
    const latest = number(await page.locator('[data-latest]').innerText());
    expect(Math.abs(latest - 16e6)).toBeLessThan(200); // +3.2 ppm offset ≈ +51 Hz
    expect(await page.locator('.raw__row[data-dir="rx"] .raw__ctl').first().innerText()).toBe('CR');
    await page.screenshot({ path: path.join(RESULTS, 'links-talk.png') });
    await page.click('[data-action="disconnect"]');

    // The same counter in query mode: poll READ?, and ask for its identity in between.
    await chooseDevice(page, 'Counter, query mode (SCPI)');
    await page.click('[data-action="connect"]');
    await page.waitForSelector('[data-state="connected"]');
    await page.click('[data-action="poll"]');
    await expect
      .poll(() => page.locator('[data-reading]').count(), { timeout: 8000 })
      .toBeGreaterThanOrEqual(3);
    await page.fill('input[name="command"]', '*IDN?');
    await page.press('input[name="command"]', 'Enter');
    await expect
      .poll(() => page.locator('[data-reply]').first().innerText(), { timeout: 5000 })
      .toContain('Driftbench Labs,SIM-CNT-1');
    // A READ? typed by hand is a reading like a polled one.
    await page.click('[data-action="stop-poll"]');
    await page.waitForSelector('[data-action="poll"]');
    const polled = await page.locator('[data-reading]').count();
    await page.fill('input[name="command"]', 'READ?');
    await page.press('input[name="command"]', 'Enter');
    await expect
      .poll(() => page.locator('[data-reading]').count(), { timeout: 5000 })
      .toBe(polled + 1);
    await page.screenshot({ path: path.join(RESULTS, 'links-query.png') });
    await page.click('[data-action="disconnect"]');

    // The SPI bridge (Driftbench's DBX-3 map): the part code by a typed transfer, then the
    // profile's own poll, its value read where the profile's value field says.
    await chooseDevice(page, 'SPI bridge with accelerometer');
    await page.click('[data-action="connect"]');
    await page.waitForSelector('[data-state="connected"]');
    await page.click('[data-quick="init-1"]');
    await page.fill('input[name="spi-bytes"]', '03 00 00');
    await page.press('input[name="spi-bytes"]', 'Enter');
    // simulators/README.md: FLAGS 01 (fresh sample), PART DB, REV 03
    await expect
      .poll(() => page.locator('[data-transfer]').first().locator('[data-miso]').allInnerTexts())
      .toEqual(['01', 'DB', '03']);
    await page.click('[data-quick="poll"]');
    await expect.poll(() => page.locator('[data-transfer]').count()).toBe(3);
    const z = await page.locator('[data-transfer]').first().locator('[data-value]').innerText();
    // Z of the accel preset lying flat: 1.0101 g ≈ +1010 mg (simulators/README.md), noise 1.2 mg rms
    expect(Number(/value \+(\d+\.\d+) mg/.exec(z)?.[1])).toBeGreaterThan(1000);
    expect(Number(/value \+(\d+\.\d+) mg/.exec(z)?.[1])).toBeLessThan(1020);
    await page.click('[data-action="poll"]');
    await expect
      .poll(() => page.locator('[data-reading]').count(), { timeout: 8000 })
      .toBeGreaterThanOrEqual(5);
    await page.screenshot({ path: path.join(RESULTS, 'links.png'), fullPage: true });
    await page.click('[data-action="disconnect"]');
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('lets a viewer watch a link but send nothing to the instrument', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'viewer', '/sign-in');
    await page.goto(`${server.url}/links`);
    await chooseDevice(page, 'Counter, query mode (SCPI)');
    await page.click('[data-action="connect"]');
    await page.waitForSelector('[data-state="connected"]');
    await page.waitForSelector('[data-testid="listen-only"]');
    expect(await page.locator('[data-action="poll"]').count()).toBe(0);
    expect(await page.locator('input[name="command"]').isDisabled()).toBe(true);
    expect(await page.locator('button:has-text("READ?")').first().isDisabled()).toBe(true);
    // Nothing was written: the raw log holds no transmitted line.
    expect(await page.locator('.raw__row[data-dir="tx"]').count()).toBe(0);
    await page.screenshot({ path: path.join(RESULTS, 'links-viewer.png') });
    await page.click('[data-action="disconnect"]');
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('says plainly when the browser has no Web Serial and offers the simulator', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await page.addInitScript(
      "Object.defineProperty(Navigator.prototype, 'serial', { get: () => undefined })",
    );
    await signIn(page, server.url, 'technician', '/sign-in');
    await page.goto(`${server.url}/links`);
    await page.waitForSelector('[data-no-serial]');
    expect(await page.locator('[data-no-serial]').innerText()).toContain('no Web Serial');
    expect(await page.locator('label:has-text("Serial port")').getAttribute('class')).toContain(
      'is-disabled',
    );
    await page.screenshot({ path: path.join(RESULTS, 'links-no-serial.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('lets an admin save a link profile for Counter C-1 from the Lab page', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'admin', '/sign-in');
    await page.goto(`${server.url}/lab`);
    await page.click('button[aria-label="Edit link profile of Counter C-1"]');
    const drawer = page.locator('.el-drawer');
    await drawer.locator('input[name="profile-name"]').waitFor();
    await drawer.locator('[data-preset="scpi-counter"]').click();
    await drawer.locator('input[name="profile-name"]').fill('C-1 on the bench USB port');
    await drawer.locator('input[name="query-command"]').fill('');
    await drawer.locator('button:has-text("Save profile")').click();
    await drawer.locator('text=query mode needs a query command').waitFor();
    await page.screenshot({ path: path.join(RESULTS, 'link-profile-form-error.png') });
    await drawer.locator('input[name="query-command"]').fill('READ?');
    await drawer.locator('textarea[name="init-commands"]').fill('*RST\n:SENS:FREQ:GATE:TIME 1');
    await expect.poll(() => drawer.locator('.el-form-item__error').count()).toBe(0);
    await page.screenshot({ path: path.join(RESULTS, 'link-profile-form.png') });
    await drawer.locator('button:has-text("Save profile")').click();
    await page.waitForSelector('td >> text=C-1 on the bench USB port');
    await page.screenshot({ path: path.join(RESULTS, 'lab-link-profiles.png') });

    const api = apiWith(server.url, await pageToken(page));
    const list = await api<{ instruments: { name: string; linkProfile: unknown }[] }>(
      'GET',
      '/api/instruments',
    );
    const c1 = list.instruments.find((i) => i.name === 'Counter C-1');
    expect(c1?.linkProfile).toMatchObject({
      name: 'C-1 on the bench USB port',
      mode: 'query',
      queryCommand: 'READ?',
      initCommands: ['*RST', ':SENS:FREQ:GATE:TIME 1'],
    });
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
