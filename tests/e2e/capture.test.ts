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
  type Api,
  type Session,
} from '../helpers/browser.js';
import { gaussian } from '../helpers/random.js';

// The captures list and a stored capture's page in a real Chromium: a technician records a
// baseline and an after-exposure capture of the Y1 crystal through the API, then a viewer reads
// the evidence — chart, statistics, stability with its ribbon, budget and the verdict glyph.
const NOMINAL = 16_000_000;

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let viewer: Session;
let technician: Session;
let openId: number;
let baselineId: number;
let afterId: number;

/** A finished 1 s-gate capture of a 16 MHz crystal: n readings of white FM 2 × 10⁻⁹, one gap, two garbled lines. */
async function recordCapture(
  api: Api,
  ids: { dutId: number; checkpointId: number; instrumentId: number; referenceId: number },
  n: number,
  offset: number,
  ambientC: number,
  seed: number,
) {
  const capture = await api<{ id: number }>('POST', '/api/captures', {
    ...ids,
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
    ambientC,
    orientation: 'flat',
    notes: 'Board RC-0001 on the bench, lid closed.',
    tags: ['rev C'],
  });
  const g = gaussian(seed);
  const readings = [];
  for (let seq = 0; seq < n; seq++) {
    if (seq >= 1500 && seq < 1520) continue; // a 20 s gap: the link dropped
    const garbled = seq === 700 || seq === 2210;
    readings.push({
      seq,
      t: seq,
      value: NOMINAL * (1 + offset + 2e-9 * g()),
      ...(garbled ? { flags: 1 } : {}),
    });
  }
  await api('POST', `/api/captures/${capture.id}/readings`, { readings });
  await api('POST', `/api/captures/${capture.id}/finish`);
  return capture.id;
}

function openAs(session: Session, colorScheme: 'light' | 'dark' = 'light') {
  return openPage(browser, { viewport: { width: 1360, height: 900 }, colorScheme, session });
}

/** Series colours 1 and 2 of the light theme. */
const SERIES_1 = 0x1f6f8b;
const SERIES_2 = 0xc26a1b;

/**
 * Pixels of the stability canvas close to a ribbon's tint: each series colour of `layers` laid at
 * 16 % over the white panel in turn (two layers where one ribbon is drawn over another).
 */
function ribbonPixels(page: Page, layers = [SERIES_1]): Promise<number> {
  const tint = layers.reduce(
    (under, colour) => under.map((u, k) => u - 0.16 * (u - ((colour >> (16 - 8 * k)) & 255))),
    [255, 255, 255],
  );
  // Runs in the page (a string, as the Node-side typecheck has no DOM types).
  return page.evaluate(`(() => {
    const canvas = document.querySelector('.stability-plot canvas');
    if (!canvas) return 0;
    const data = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height).data;
    const [r, g, b] = [${tint.join(', ')}];
    let count = 0;
    for (let i = 0; i < data.length; i += 4) {
      if (Math.abs(data[i] - r) < 8 && Math.abs(data[i + 1] - g) < 8 && Math.abs(data[i + 2] - b) < 8) count++;
    }
    return count;
  })()`);
}

describe('the capture pages', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();

    technician = await login(server.url, 'technician');
    viewer = await login(server.url, 'viewer');
    const api = apiWith(server.url, technician.token);
    const { studies } = await api<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
    const study = await api<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string }>;
    }>('GET', `/api/studies/${studies[0].id}`);
    const checkpoints = [...study.checkpoints].sort((a, b) => a.order - b.order);
    const dutId = study.duts.find((d) => d.label.startsWith('Y1'))!.id;
    const { instruments } = await api<{ instruments: Array<{ id: number; kind: string }> }>(
      'GET',
      '/api/instruments',
    );
    const { references } = await api<{ references: Array<{ id: number }> }>(
      'GET',
      '/api/references',
    );
    const ids = {
      dutId,
      instrumentId: instruments.find((i) => i.kind === 'counter')!.id,
      referenceId: references[0].id,
    };
    baselineId = await recordCapture(
      api,
      { ...ids, checkpointId: checkpoints[0].id },
      3000,
      4.1e-6,
      23.1,
      11,
    );
    afterId = await recordCapture(
      api,
      { ...ids, checkpointId: checkpoints[1].id },
      12_000,
      4.35e-6,
      23.4,
      12,
    );
    // No reference on the open one: the conditions panel then says the timebase is taken as exact.
    const open = await api<{ id: number }>('POST', '/api/captures', {
      dutId,
      instrumentId: ids.instrumentId,
      checkpointId: checkpoints[2].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
    });
    openId = open.id;
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('lists captures newest first and opens one on a row click', async () => {
    const { page, errors } = await openAs(viewer);
    await page.goto(`${server.url}/captures`);
    await page.waitForSelector('.captures__table .el-table__row');
    const ids = await page.locator('.captures__id').allInnerTexts();
    expect(ids.map((s) => Number(s.trim()))).toEqual([openId, afterId, baselineId]);
    expect(await page.locator('.captures__table [data-state="open"]').innerText()).toContain(
      'On air',
    );
    expect(await page.locator('.captures__table').innerText()).toContain('Y1 16 MHz crystal');
    await expect
      .poll(() => page.locator('.captures__table').innerText())
      .toContain('Tomas Technician');
    await page.screenshot({ path: path.join(RESULTS, 'captures-list.png'), fullPage: true });

    await page.locator('.captures__table .el-table__row').nth(1).locator('td').nth(3).click();
    await page.waitForURL(new RegExp(`/captures/${afterId}$`));
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('shows a viewer the stored evidence of the after-exposure capture', async () => {
    const { page, errors } = await openAs(viewer);
    await page.goto(`${server.url}/captures/${afterId}`);

    await page.waitForSelector('[data-chart="time-series"] canvas');
    await expect
      .poll(() => page.locator('[data-stat="mean"]').innerText())
      .toMatch(/^16\u2009000\u2009069\.\d+ Hz$/);
    expect(await page.locator('[data-stat="offset"]').innerText()).toMatch(/^\+4\.3\d\d ppm$/);
    expect(await page.locator('[data-stat="n"]').innerText()).toMatch(/11\u2009978 \/ 11\u2009980/);

    await page.waitForSelector('.stability-plot canvas');
    expect(await page.locator('[data-axis-title]').innerText()).toBe('OADEV σy(τ)');
    // The baseline's curve is overlaid (series 1, dashed with square markers) on this capture's (series 2).
    await expect.poll(() => page.locator('.stability-plot [data-legend-series]').count()).toBe(2);
    expect(await page.locator('.stability-plot [data-legend-series]').allInnerTexts()).toEqual([
      `baseline · capture ${baselineId}`,
      `this capture · capture ${afterId}`,
    ]);
    await page
      .locator('.stability-plot')
      .screenshot({ path: path.join(RESULTS, 'stability-overlay.png') });
    // White FM gives narrow intervals at short τ: the ribbons show most at long τ, this capture's
    // alone beyond the baseline's longest τ and over the baseline's where both have points.
    await expect.poll(() => ribbonPixels(page, [SERIES_2])).toBeGreaterThan(30);
    await expect.poll(() => ribbonPixels(page, [SERIES_1, SERIES_2])).toBeGreaterThan(30);
    expect(await page.locator('.stability-table tbody tr').count()).toBeGreaterThan(5);

    const budget = await page
      .locator('section[aria-labelledby="budget-title"] .budget')
      .innerText();
    expect(budget).toContain('Combined standard uncertainty');
    expect(budget).toContain('Reference offset');
    expect(
      await page
        .locator('section[aria-labelledby="budget-title"] [data-budget="relative"]')
        .innerText(),
    ).toMatch(/pp[mb]$/);

    await page.waitForSelector('.comparison__body');
    expect(['within', 'exceeds', 'inconclusive']).toContain(
      await page.locator('.comparison .verdict-glyph__word').innerText(),
    );
    expect(await page.locator('[data-compare="delta"]').innerText()).toMatch(/^\+\d\.\d+ Hz$/);
    expect(await page.locator('.verdict-glyph__band').count()).toBe(1);

    expect(await page.locator('[data-action="edit-conditions"]').count()).toBe(0);
    expect(await page.locator('[data-action="replay"]').innerText()).toBe('Replay');
    await page.screenshot({ path: path.join(RESULTS, 'capture-page.png'), fullPage: true });

    // The CSV comes through fetch with the session token and is saved as a file.
    const download = page.waitForEvent('download');
    await page.click('[data-action="csv"]');
    expect((await download).suggestedFilename()).toBe(`driftbench-capture-${afterId}.csv`);

    // The 12 000-reading overview is min/max decimated; zooming asks the server for the readings in view.
    const canvas = page.locator('[data-chart="time-series"] .u-over');
    await canvas.scrollIntoViewIfNeeded(); // the page grew: the chart may sit below the fold
    const box = (await canvas.boundingBox())!;
    const refined = page.waitForResponse((r) =>
      /\/readings\?from=\d+&to=\d+&maxPoints=\d+/.test(r.url()),
    );
    await page.mouse.move(box.x + box.width * 0.4, box.y + box.height / 2);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width * 0.45, box.y + box.height / 2, { steps: 5 });
    await page.mouse.up();
    expect((await refined).ok()).toBe(true);

    await page.locator('[data-control="kind"] label:has-text("MDEV")').first().click();
    await expect.poll(() => page.locator('[data-axis-title]').innerText()).toBe('MDEV Mod σy(τ)');
    await page.locator('[data-control="kind"] label:has-text("OADEV")').click();
    await expect.poll(() => page.locator('[data-axis-title]').innerText()).toBe('OADEV σy(τ)');
    await page
      .locator('section[aria-labelledby="stability-title"]')
      .screenshot({ path: path.join(RESULTS, 'stability.png') });
    expect(errors).toEqual([]);
    await page.context().close();

    const dark = await openAs(viewer, 'dark');
    await dark.page.goto(`${server.url}/captures/${afterId}`);
    await dark.page.waitForSelector('.stability-plot canvas');
    await dark.page.waitForSelector('.comparison__body');
    await dark.page.screenshot({
      path: path.join(RESULTS, 'capture-page-dark.png'),
      fullPage: true,
    });
    expect(dark.errors).toEqual([]);
    await dark.page.context().close();
  });

  it("shows an open capture without readings, and saves a technician's notes", async () => {
    const { page, errors } = await openAs(technician);
    await page.goto(`${server.url}/captures/${openId}`);
    await page.waitForSelector('text=No readings yet');
    expect(await page.locator('[data-action="watch"]').innerText()).toBe('Watch live');
    await page.waitForSelector('text=Too few readings for a stability plot');
    await page.waitForSelector('text=Compared once finished');

    await page.click('[data-action="edit-conditions"]');
    await page.fill('textarea[name="notes"]', 'Lid opened at 10:42 to reseat the probe.');
    await page.click('button:has-text("Save")');
    await page.waitForSelector('.conditions__saved');
    expect(await page.locator('.conditions__text').innerText()).toBe(
      'Lid opened at 10:42 to reseat the probe.',
    );
    await page.screenshot({ path: path.join(RESULTS, 'capture-open-empty.png'), fullPage: true });
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
