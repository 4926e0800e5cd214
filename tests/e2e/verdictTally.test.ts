import { execFileSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, launchChromium, openPage, signIn } from '../helpers/browser.js';
import { addStabilityAndTiltVerdicts } from '../helpers/verdictKinds.js';

// A crystal whose stability exceeds its limit and an accelerometer whose X offset moved past its
// limit, in a real Chromium: the study matrix's tally counts both "exceeds" and says of which kind;
// the printed report prints σy(τ) with its interval, the limit and the verdict, and each axis of
// the tilt checks; the bench and live-view breadcrumbs keep a space before the DUT.

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let checkpoints: number[];
let crystalId: number;
let crystalCaptureId: number;

describe('verdicts of every kind in the tally and the printed report', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    ({ checkpoints, crystalId, crystalCaptureId } = await addStabilityAndTiltVerdicts(server.url));
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('counts the stability and the tilt-check "exceeds" in the matrix tally, by kind', async () => {
    const { page, errors } = await openPage(browser, { viewport: { width: 1440, height: 1000 } });
    await signIn(page, server.url, 'lead', '/studies/1');
    await page.locator('[data-testid="cell-stability"]').waitFor();
    const count = async (name: string) =>
      Number(await page.locator(`[data-count="${name}"]`).innerText());
    expect(await count('stability-exceeds')).toBe(1);
    expect(await count('tilt-exceeds')).toBe(1);
    // The X sensitivity did not move (+0.3 % both times) against ±1 %: within.
    expect(await count('tilt-within')).toBe(1);
    const changeExceeds = await page.locator('[data-count="change-exceeds"]').count();
    // The total is every kind's together, so the lead reads it first.
    expect(await count('exceeds')).toBe(2 + (changeExceeds ? await count('change-exceeds') : 0));
    expect(await page.locator('.matrix__kinds').innerText()).toMatch(
      /stability limit: 1 exceeds[\s\S]*tilt check: 1 exceeds · 1 within/,
    );
    await page
      .locator('[data-section="matrix"]')
      .screenshot({ path: path.join(RESULTS, 'matrix-tally-by-kind.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it("prints the crystal's stability verdict and each tilt-check axis in the report", async () => {
    const { page, errors } = await openPage(browser, { viewport: { width: 1200, height: 1000 } });
    await signIn(page, server.url, 'lead', '/studies/1');
    await page.goto(`${server.url}/studies/1/report`);
    const stab = page.locator('[data-testid="report-stability-limits"]');
    await stab.waitFor();
    const row = stab.locator(`tr[data-capture="${crystalCaptureId}"]`);
    const text = (await row.innerText()).replace(/\s+/g, ' ');
    expect(text).toMatch(/σy\(10 s\) = 0\.[234]\d* ppb/);
    expect(text).toMatch(/0\.\d+ … 0\.\d+ ppb/);
    expect(text).toContain('≤ 0.1 ppb at τ = 10 s');
    expect(await row.locator('td[data-verdict]').innerText()).toBe('exceeds');

    const tilt = page.locator('[data-testid="report-tilt-checks"]');
    const x = tilt.locator('tr[data-axis="X"]');
    expect(await x.count()).toBe(2);
    expect(await x.nth(0).locator('[data-quantity="offset"]').innerText()).toMatch(
      /^\+4\.\d+ ± 0\.\d+ mg$/,
    );
    expect(await x.nth(1).locator('[data-quantity="offset"]').innerText()).toMatch(
      /^Δ \+(39|40|41)\.\d+ ± 0\.\d+ mg — exceeds$/,
    );
    expect(await x.nth(1).locator('[data-quantity="sensitivity"]').innerText()).toMatch(
      /— within$/,
    );

    // The DUT table names every limit the verdicts are judged against.
    const y1 = page.locator('tr', { has: page.locator('td >> text=Y1 16 MHz crystal') });
    expect(await y1.locator('[data-figure="limits"]').innerText()).toBe(
      'frequency offset ±1 ppm · stability σy(τ) at τ = 10 s ≤ 0.1 ppb',
    );
    const u5 = page.locator('tr', { has: page.locator('td >> text=U5 3-axis accelerometer') });
    expect(await u5.locator('[data-figure="limits"]').innerText()).toBe(
      'offset ±20 mg · sensitivity ±1 %',
    );

    // What the paper carries: the PDF's own text.
    const file = path.join(RESULTS, 'report-verdict-kinds.pdf');
    writeFileSync(file, await page.pdf({ format: 'A4', preferCSSPageSize: true }));
    const printed = execFileSync('pdftotext', ['-raw', file, '-']).toString('utf8');
    expect(printed).toContain("Stability limit (σy at the limit's τ, 95 % interval)");
    expect(printed).toMatch(/σy\(10 s\) = 0\.[234]\d* ppb/);
    expect(printed).toMatch(/≤ 0\.1 ppb at τ = 10 s\s+exceeds/);
    expect(printed).toContain('Tilt checks per axis');
    expect(printed).toMatch(/Δ \+(39|40|41)\.\d+ ± 0\.\d+ mg — exceeds/);
    expect(printed).toContain("A crystal's stability limit is judged on each capture");
    expect(printed).toMatch(/stability limit: 1 exceeds/);
    for (const part of [stab, tilt]) {
      await part.scrollIntoViewIfNeeded();
    }
    await stab
      .locator('xpath=..')
      .screenshot({ path: path.join(RESULTS, 'report-stability-limit.png') });
    await tilt
      .locator('xpath=..')
      .screenshot({ path: path.join(RESULTS, 'report-tilt-checks.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('keeps a space before the DUT in the bench and live-view breadcrumbs', async () => {
    const { page, errors } = await openPage(browser, { viewport: { width: 1280, height: 900 } });
    await signIn(page, server.url, 'technician', `/captures/${crystalCaptureId}/live`);
    const live = page.locator('.capture-live__crumbs');
    await live.waitFor();
    expect(await live.innerText()).toMatch(/Baseline › Y1 16 MHz crystal · capture/);

    await page.goto(`${server.url}/bench?study=1&checkpoint=${checkpoints[0]}&dut=${crystalId}`);
    await page.waitForSelector('[data-testid="start-capture"]');
    await page
      .locator('[data-field="link-kind"] .el-radio-button', { hasText: 'Simulator' })
      .click();
    await page.fill('[data-field="ambient"] input', '23.2');
    await page.press('[data-field="ambient"] input', 'Tab');
    await page.click('[data-testid="start-capture"]');
    const crumbs = page.locator('.bench__crumbs');
    await crumbs.waitFor();
    expect(await crumbs.innerText()).toMatch(/ › Baseline › Y1 16 MHz crystal/);
    await page.locator('.bench').screenshot({ path: path.join(RESULTS, 'bench-breadcrumb.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
