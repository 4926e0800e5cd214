import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import {
  RESULTS,
  apiAs,
  launchChromium,
  openPage,
  type Api,
  type Session,
} from '../helpers/browser.js';
import { accelerationBody } from '../helpers/demo.js';
import { gaussian } from '../helpers/random.js';

// Accelerometers in a real Chromium (issue 13): a technician records the U5 accelerometer's tilt
// check (flat, on edge, inverted) at the baseline and after the wash through the API and stores
// both as tilt checks; a lead reads the matrix — a tilt-check result per checkpoint with each
// axis's offset and sensitivity change and its verdict — and an acceleration capture's page, which
// speaks of gravity, the sensor's LSB and the pose, never of frequency stability or gate times.

/** The test part's Z axis (invented): +6.1 mg offset, +0.4 % sensitivity, 1.2 mg noise (flip-pair model, common practice). */
function zReading(orientation: 'flat' | 'on-edge' | 'inverted'): number {
  const g = orientation === 'flat' ? 1000 : orientation === 'inverted' ? -1000 : 0;
  return g * 1.004 + 6.1;
}

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let lead: Session;
const ids: Record<string, number> = {};

async function accelCapture(
  api: Api,
  dutId: number,
  checkpointId: number,
  orientation: 'flat' | 'on-edge' | 'inverted',
  seed: number,
): Promise<number> {
  const c = await api<{ id: number }>(
    'POST',
    '/api/captures',
    accelerationBody(dutId, checkpointId, orientation),
  );
  const g = gaussian(seed);
  const readings = Array.from({ length: 200 }, (_, seq) => ({
    seq,
    t: seq * 0.1,
    value: zReading(orientation) + 1.2 * g(),
  }));
  await api('POST', `/api/captures/${c.id}/readings`, { readings });
  await api('POST', `/api/captures/${c.id}/finish`);
  return c.id;
}

describe('an accelerometer study', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    const technician = await apiAs(server.url, 'technician');
    const engineer = await apiAs(server.url, 'engineer');
    lead = (await apiAs(server.url, 'lead')).session;
    const study = await technician.call<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string }>;
    }>('GET', '/api/studies/1');
    const [base, wash] = [...study.checkpoints].sort((a, b) => a.order - b.order);
    const accel = study.duts.find((d) => d.label.startsWith('U5'))!.id;
    await engineer.call('PATCH', `/api/duts/${accel}`, {
      limits: { offset: { limit: 20 }, sensitivity: { limit: 1 } },
    });
    let seed = 70;
    for (const cp of [base, wash]) {
      const flat = await accelCapture(technician.call, accel, cp.id, 'flat', seed++);
      const onEdge = await accelCapture(technician.call, accel, cp.id, 'on-edge', seed++);
      const inverted = await accelCapture(technician.call, accel, cp.id, 'inverted', seed++);
      await technician.call('POST', `/api/duts/${accel}/tilt-checks`, {
        checkpointId: cp.id,
        flatCaptureId: flat,
        invertedCaptureId: inverted,
        onEdgeCaptureId: onEdge,
      });
      ids[`flat${cp === base ? 'Base' : 'Wash'}`] = flat;
    }
    // After the wash a plain flat capture, finished last: the cell compares it with the flat baseline.
    ids.plainFlat = await accelCapture(technician.call, accel, wash.id, 'flat', seed++);
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows a tilt-check result per checkpoint in the matrix, with offset and sensitivity verdicts per axis', async () => {
    const { page, errors } = await openPage(browser, {
      viewport: { width: 1360, height: 900 },
      session: lead,
    });
    await page.goto(`${server.url}/studies/1`);
    const row = page.locator('tr', { has: page.locator('th >> text=U5 3-axis accelerometer') });
    await row.locator('[data-testid="cell-tilt-check"]').first().waitFor();
    expect(await row.locator('th').innerText()).toContain('offset ±20 mg · sensitivity ±1 %');
    const cells = row.locator('td');
    const baseTilt = cells.nth(0).locator('[data-testid="cell-tilt-check"]');
    expect(await baseTilt.locator('[data-quantity="offset"]').innerText()).toMatch(
      /Z offset\s+\+[56]\.\d+ ± 0\.\d+ mg/,
    );
    expect(await baseTilt.locator('[data-quantity="sensitivity"]').innerText()).toMatch(
      /Z sensitivity\s+\+0\.\d+ ± 0\.\d+ %/,
    );
    const washTilt = cells.nth(1).locator('[data-testid="cell-tilt-check"]');
    expect(await washTilt.locator('[data-quantity="offset"]').getAttribute('data-verdict')).toBe(
      'within',
    );
    expect(
      await washTilt.locator('[data-quantity="offset"] .verdict-glyph__word').innerText(),
    ).toBe('within');
    expect(
      await washTilt.locator('[data-quantity="sensitivity"] .verdict-glyph__word').innerText(),
    ).toBe('within');
    expect(await washTilt.locator('[data-quantity="offset"]').innerText()).toMatch(
      /Δ [+\u2212]0\.\d+ ± 0\.\d+ mg/,
    );
    // The plain flat capture is compared with the flat baseline: within, a Δ of noise (the bug gave +2007.95 mg).
    expect(await cells.nth(1).getAttribute('data-verdict')).toBe('within');
    expect(await cells.nth(1).locator('[data-figure="delta"]').innerText()).toMatch(
      /^Δ [+\u2212]0\.\d+ mg$/,
    );
    await row.scrollIntoViewIfNeeded();
    await page
      .locator('[data-section="matrix"]')
      .screenshot({ path: path.join(RESULTS, 'accelerometer-matrix.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('shows an acceleration capture with its own statistics and budget and no frequency wording', async () => {
    const { page, errors } = await openPage(browser, {
      viewport: { width: 1360, height: 900 },
      session: lead,
    });
    await page.goto(`${server.url}/captures/${ids.plainFlat}`);
    await page.locator('[data-section="budget"] table').waitFor();
    await page.locator('[data-section="gravity"] [data-gravity="from-ideal"]').waitFor();
    await page.locator('[data-verdict="within"]').first().waitFor();
    const text = await page.locator('main').innerText();
    // Panel titles are set in capitals by CSS: innerText gives them so.
    expect(text).toMatch(/acceleration statistics/i);
    expect(text).toMatch(/against gravity/i);
    expect(text).toMatch(/Sensor resolution \(one LSB\)/);
    expect(text).toMatch(/Orientation error/);
    expect(text).toContain(`capture ${ids.flatBase}`); // compared with the flat baseline
    for (const word of [
      /frequency stability/i,
      /gate time/i,
      /counter timebase taken as exact/i,
      /no uncertainty budget/i,
      /mmg/,
      /τ₀/,
    ]) {
      expect(text).not.toMatch(word);
    }
    await page.screenshot({
      path: path.join(RESULTS, 'accelerometer-capture.png'),
      fullPage: true,
    });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it("lets a planner set the accelerometer's sensitivity limit in the DUT dialog, and refuses a negative one", async () => {
    const engineer = (await apiAs(server.url, 'engineer')).session;
    const { page, errors } = await openPage(browser, {
      viewport: { width: 1360, height: 1100 },
      session: engineer,
    });
    await page.goto(`${server.url}/studies/1`);
    const accel = page.locator('[data-dut-label^="U5"]');
    await accel.waitFor();
    await accel.locator('button', { hasText: 'Edit' }).click();
    const dialog = page.locator('.el-dialog', { hasText: 'Edit DUT' });
    const field = dialog.locator('input[name="sensitivityLimit"]');
    await field.waitFor();
    expect(await field.inputValue()).toBe('1');
    await field.fill('-0.5');
    await dialog.locator('button', { hasText: 'Save DUT' }).click();
    await dialog.locator('[data-field="sensitivity-limit"] .el-form-item__error').waitFor();
    await field.fill('0.5');
    await page.screenshot({ path: path.join(RESULTS, 'accelerometer-dut-dialog.png') });
    await dialog.locator('button', { hasText: 'Save DUT' }).click();
    const row = page.locator('tr', { has: page.locator('th >> text=U5 3-axis accelerometer') });
    await expect
      .poll(() => row.locator('th').innerText(), { timeout: 30_000 })
      .toContain('sensitivity ±0.5 %');
    expect(errors).toEqual([]);
    await page.context().close();
  }, 60_000);
});
