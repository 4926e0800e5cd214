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
import { gaussian } from '../helpers/random.js';

// The study page in a real Chromium: a technician records the Y3 tuning fork at the first three
// checkpoints through the API (baseline, a small change, a large one); a lead reads the matrix and
// the cautions; an engineer plans one more checkpoint through the dialog.
const NOMINAL = 32_768;

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let lead: Session;
let engineer: Session;
const captureIds: number[] = [];

/** A finished 1 s-gate capture of n readings around the nominal, offset by `offsetPpm`, white noise of 0.1 ppm. */
async function recordCapture(
  api: Api,
  dutId: number,
  checkpointId: number,
  offsetPpm: number,
  seed: number,
): Promise<number> {
  const capture = await api<{ id: number }>('POST', '/api/captures', {
    dutId,
    checkpointId,
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
    referenceId: 1,
    ambientC: 23.2,
  });
  const g = gaussian(seed);
  const readings = Array.from({ length: 400 }, (_, seq) => ({
    seq,
    t: seq,
    value: NOMINAL * (1 + (offsetPpm + 0.1 * g()) * 1e-6),
  }));
  await api('POST', `/api/captures/${capture.id}/readings`, { readings });
  await api('POST', `/api/captures/${capture.id}/finish`);
  return capture.id;
}

function openAs(session: Session) {
  return openPage(browser, { viewport: { width: 1360, height: 900 }, session });
}

describe('the study page', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    const technician = await apiAs(server.url, 'technician');
    lead = (await apiAs(server.url, 'lead')).session;
    engineer = (await apiAs(server.url, 'engineer')).session;
    const study = await technician.call<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string }>;
    }>('GET', '/api/studies/1');
    const checkpoints = [...study.checkpoints].sort((a, b) => a.order - b.order);
    const fork = study.duts.find((d) => d.label.startsWith('Y3'))!.id;
    const offsets = [0, 0.1, 2.5];
    for (let i = 0; i < 3; i++)
      captureIds.push(
        await recordCapture(technician.call, fork, checkpoints[i].id, offsets[i], 31 + i),
      );
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows a lead the matrix with its verdicts, the legend and the cautions', async () => {
    const { page, errors } = await openAs(lead);
    await page.goto(`${server.url}/studies`);
    await page.click('a.studies__title[href="/studies/1"]');
    await page.waitForURL(/\/studies\/1$/);
    await page.waitForSelector('td[data-cell="compared"]');

    const row = page.locator('tr', { has: page.locator('th >> text=Y3 32.768 kHz tuning fork') });
    const cells = row.locator('td');
    expect(await cells.nth(0).getAttribute('data-cell')).toBe('baseline');
    expect(await cells.nth(0).locator('svg').count()).toBe(0);
    expect(await cells.nth(1).locator('.verdict-glyph__word').innerText()).toBe('within');
    expect(await cells.nth(2).locator('.verdict-glyph__word').innerText()).toBe('exceeds');
    expect(await cells.nth(2).locator('[data-figure="delta"]').innerText()).toMatch(
      /^Δ \+2\.\d+ ppm$/,
    );
    expect(await cells.nth(3).getAttribute('data-cell')).toBe('empty');
    expect(await cells.nth(2).locator('a').getAttribute('href')).toBe(`/captures/${captureIds[2]}`);

    expect(await page.locator('[data-count="within"]').innerText()).toBe('1');
    expect(await page.locator('[data-count="exceeds"]').innerText()).toBe('1');
    expect(await page.locator('[data-count="not-captured"]').innerText()).toBe('17');
    expect(await page.locator('.matrix__legend').innerText()).toContain('whisker');

    const cautions = await page.locator('[data-panel="cautions"]').innerText();
    expect(cautions).toContain('Never run a bath dry');
    expect(cautions).toContain('local codes and licensed practice come first');
    // One note per process the plan holds (the wash and the bake), each naming its process.
    const notes = await page.locator('[data-dut-label^="Y3"] [data-note]').allInnerTexts();
    expect(notes).toEqual([
      expect.stringMatching(/^Wash .*32\.768 kHz/),
      expect.stringMatching(/^Bake: /),
    ]);
    expect(await page.locator('button:has-text("Capture on the bench")').isVisible()).toBe(true);

    await page.screenshot({ path: path.join(RESULTS, 'study.png'), fullPage: true });
    await page
      .locator('[data-section="matrix"]')
      .screenshot({ path: path.join(RESULTS, 'study-matrix.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('lets an engineer add a checkpoint through the dialog, with messages for what is missing', async () => {
    const { page, errors } = await openAs(engineer);
    await page.goto(`${server.url}/studies/1`);
    await page.waitForSelector('td[data-cell="compared"]');

    await page.click('button:has-text("Add checkpoint")');
    const dialog = page.locator('.el-dialog');
    await dialog.locator('input[name="name"]').waitFor();
    await expect
      .poll(() => page.evaluate("document.activeElement?.getAttribute('name')"))
      .toBe('name');
    await dialog.locator('input[name="bathKHz"]').fill('forty');
    await dialog.locator('button:has-text("Add checkpoint")').click();
    await dialog.locator('text=Give the checkpoint a name').waitFor();
    await dialog.locator('text=Enter a number').waitFor();
    await page.screenshot({ path: path.join(RESULTS, 'study-add-checkpoint.png') });

    await dialog.locator('input[name="name"]').fill('After second wash (5 min/side)');
    await dialog.locator('input[name="process"]').fill('Aqueous ultrasonic wash');
    await dialog.locator('input[name="bathKHz"]').fill('40');
    await dialog.locator('input[name="temperatureC"]').fill('50');
    await dialog.locator('input[name="minutesPerSide"]').fill('5');
    await dialog.locator('input[name="cumulativeMinutes"]').press('Enter');

    await page.waitForSelector('th.matrix__head >> text=After second wash (5 min/side)');
    expect(await page.locator('th.matrix__head').last().innerText()).toContain(
      '40 kHz · 50 °C · 5 min/side',
    );
    expect(
      await page.locator('[data-checkpoint-name="After second wash (5 min/side)"]').innerText(),
    ).toContain('50 °C');
    expect(await page.locator('[data-count="not-captured"]').innerText()).toBe('22');

    // A DUT too: a missing label and a limit of zero are named, then Enter adds it.
    await page.click('button:has-text("Add DUT")');
    const dutDialog = page.locator('.el-dialog', { hasText: 'Add DUT' });
    await dutDialog.locator('input[name="nominal"]').fill('8000000');
    await dutDialog.locator('input[name="limit"]').fill('0');
    await dutDialog.locator('button:has-text("Add DUT")').click();
    await dutDialog.locator('text=Give the DUT a label').waitFor();
    await dutDialog.locator('text=Use a number above 0').waitFor();
    await dutDialog.locator('input[name="label"]').fill('Y6 8 MHz crystal');
    await dutDialog.locator('input[name="limit"]').fill('1');
    await dutDialog.locator('input[name="serial"]').press('Enter');
    await page.waitForSelector('th.matrix__dut >> text=Y6 8 MHz crystal');
    expect(await page.locator('[data-dut-label="Y6 8 MHz crystal"]').innerText()).toContain(
      '8\u2009000\u2009000 Hz',
    );
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
