import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, apiAs, launchChromium, openPage, signIn } from '../helpers/browser.js';
import { gaussian } from '../helpers/random.js';

// Issue 13 in a real Chromium: a technician runs the guided tilt check on the X axis of the
// simulated accelerometer (the bench polls X1/X0 and the simulator takes the X poses) and the
// matrix shows the X result beside the checkpoint; a crystal with a stability limit shows σy at
// the limit's τ with its verdict in its matrix cell and on its capture page.

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let baseId: number;
let accelId: number;
let crystalCaptureId: number;

async function radio(page: Page, field: string, text: string): Promise<void> {
  await page.locator(`[data-field="${field}"] .el-radio-button`, { hasText: text }).first().click();
}

describe('a tilt check on X and a stability limit', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    const technician = await apiAs(server.url, 'technician');
    const engineer = await apiAs(server.url, 'engineer');
    const study = await technician.call<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string; nominal: number }>;
    }>('GET', '/api/studies/1');
    baseId = [...study.checkpoints].sort((a, b) => a.order - b.order)[0].id;
    accelId = study.duts.find((d) => d.label.startsWith('U5'))!.id;
    const crystal = study.duts.find((d) => d.label.startsWith('Y1'))!;
    // White FM of 1 ppb at 1 s: σy(10 s) ≈ 0.32 ppb (NIST SP 1065 Table 3), far inside 100 ppb.
    await engineer.call('PATCH', `/api/duts/${crystal.id}`, {
      limits: { stability: { limit: 100, tauS: 10 } },
    });
    const c = await technician.call<{ id: number }>('POST', '/api/captures', {
      dutId: crystal.id,
      checkpointId: baseId,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      referenceId: 1,
      ambientC: 23,
    });
    const g = gaussian(5);
    const readings = Array.from({ length: 600 }, (_, seq) => ({
      seq,
      t: seq,
      value: crystal.nominal * (1 + 1e-9 * g()),
    }));
    await technician.call('POST', `/api/captures/${c.id}/readings`, { readings });
    await technician.call('POST', `/api/captures/${c.id}/finish`);
    crystalCaptureId = c.id;
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('runs the guided tilt check on X and shows the X result in the matrix', async () => {
    const { page, errors } = await openPage(browser, { viewport: { width: 1440, height: 940 } });
    await signIn(
      page,
      server.url,
      'technician',
      `/bench?study=1&checkpoint=${baseId}&dut=${accelId}`,
    );
    await page.waitForSelector('[data-testid="start-capture"]');
    await expect
      .poll(() => page.locator('[data-field="instrument"] .el-select__wrapper').innerText())
      .toContain('SPI bridge');
    await radio(page, 'link-kind', 'Simulator');
    await radio(page, 'acceleration', '10×');
    await page.fill('[data-field="gate"] input', '0.1');
    await page.press('[data-field="gate"] input', 'Tab');
    await radio(page, 'guided', 'Guided tilt check');
    await page.fill('[data-field="ambient"] input', '23.1');
    await page.press('[data-field="ambient"] input', 'Tab');
    await page.click('[data-testid="start-capture"]');
    await page.waitForSelector('[data-testid="accel-step"]');
    await page.locator('[data-testid="tilt-axis"] .el-radio-button', { hasText: 'X' }).click();
    await page.fill('.accel-check__settings input >> nth=0', '40');
    await page.press('.accel-check__settings input >> nth=0', 'Tab');
    const steps = ['X up', 'X level', 'X down'];
    for (const [i, step] of steps.entries()) {
      await expect
        .poll(() => page.locator('[data-testid="accel-step"]').innerText())
        .toContain(step);
      await page.click('[data-testid="accel-step"]');
      await expect
        .poll(() => page.locator('.accel-check__got').count(), { timeout: 20_000 })
        .toBe(i + 1);
    }
    expect(await page.locator('.accel-check__got').first().innerText()).toMatch(
      /^X = 1\D?00\d\.\d+ mg/,
    );
    await expect
      .poll(() => page.locator('[data-testid="tilt-stored"]').innerText(), { timeout: 10_000 })
      .toContain('Stored');
    expect((await page.locator('.accel-check__result h2').textContent())?.trim()).toBe(
      'X axis, against local gravity',
    );
    const num = async (sel: string) =>
      Number((await page.locator(sel).innerText()).replace('−', '-').replace(/[^\d.+-]/g, ''));
    // The simulated part's X axis: bias +4.2 mg, sensitivity error +0.3 % (simulators/presets.ts).
    const offset = await num('[data-result="offset"]');
    expect(offset).toBeGreaterThan(3.2);
    expect(offset).toBeLessThan(5.2);
    const sens = await num('[data-result="sensitivity"]');
    expect(sens).toBeGreaterThan(0.2);
    expect(sens).toBeLessThan(0.4);
    await page.screenshot({ path: path.join(RESULTS, 'tilt-check-x.png'), fullPage: true });

    await page.goto(`${server.url}/studies/1`);
    const row = page.locator('tr', { has: page.locator('th >> text=U5 3-axis accelerometer') });
    const tilt = row.locator('td').nth(0).locator('[data-testid="cell-tilt-check"]');
    await tilt.waitFor();
    const x = tilt.locator('[data-axis="X"]');
    expect(await x.locator('[data-quantity="offset"]').innerText()).toMatch(
      /X offset\s+\+[345]\.\d+ ± 0\.\d+ mg/,
    );
    expect(await x.locator('[data-quantity="sensitivity"]').innerText()).toMatch(
      /X sensitivity\s+\+0\.\d+ ± 0\.\d+ %/,
    );
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it("shows a crystal's stability verdict in its matrix cell and on its capture page", async () => {
    const { page, errors } = await openPage(browser, { viewport: { width: 1440, height: 1000 } });
    await signIn(page, server.url, 'lead', '/studies/1');
    const row = page.locator('tr', { has: page.locator('th >> text=Y1') });
    const stab = row.locator('td').nth(0).locator('[data-testid="cell-stability"]');
    await stab.waitFor();
    expect(await stab.getAttribute('data-verdict')).toBe('within');
    expect(await stab.innerText()).toMatch(/σy\(10 s\)\s+0\.\d+ ppb/);
    expect(await stab.innerText()).toContain('limit ≤ 100 ppb at τ = 10 s');
    expect(await stab.innerText()).toMatch(/95 % interval 0\.\d+ … 0\.\d+ ppb/);
    await page
      .locator('[data-section="matrix"]')
      .screenshot({ path: path.join(RESULTS, 'matrix-x-axis-and-stability.png') });

    await page.goto(`${server.url}/captures/${crystalCaptureId}`);
    const section = page.locator('[data-section="stability-limit"]');
    await section.waitFor();
    expect(await section.getAttribute('data-verdict')).toBe('within');
    expect(await section.locator('[data-figure="verdict"]').innerText()).toBe('within');
    expect(await section.locator('[data-figure="sigma"]').innerText()).toMatch(/^0\.\d+ ppb$/);
    await section.screenshot({ path: path.join(RESULTS, 'capture-stability-limit.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
