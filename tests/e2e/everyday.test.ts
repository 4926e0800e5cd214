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
import { linkPreset } from '../../shared/protocol/linkProfile.js';

// Issue 14 in a real Chromium: the replay seek bar and count, the "simulated" mark wherever a
// simulated capture appears, honest defaults on the bench, missing pages that offer the way out,
// a new study that opens, and the glossary.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let engineer: Session;
let api: Api;
let studyId: number;
let simulatedId: number;
const VIEWPORT = { width: 1360, height: 900 };

/** Seconds shown by the replay position ("312 s of 599 s" → 312). */
async function shownSeconds(page: Page): Promise<number> {
  const text = await page.locator('[data-testid="replay-position"]').innerText();
  return Number(/^([\d\s\u2009.]+) s/.exec(text)![1].replace(/[\s\u2009]/g, ''));
}

describe('everyday use', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    engineer = await login(server.url, 'engineer');
    api = apiWith(server.url, engineer.token);
    const { studies } = await api<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
    studyId = studies[0].id;
    const study = await api<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string; nominal: number }>;
    }>('GET', `/api/studies/${studyId}`);
    const cps = [...study.checkpoints].sort((a, b) => a.order - b.order);
    const dut = study.duts.find((d) => d.label.startsWith('Y1'))!;
    // 600 readings at 1 s from a simulator, 12 of them flagged by the link: the replay must end at 600 of 600.
    const profile = {
      ...linkPreset('talk-counter'),
      kind: 'simulator' as const,
      simulator: { path: '/sim/counter' as const, params: { preset: 'xtal-16m', checkpoint: '0' } },
    };
    const { instruments } = await api<{ instruments: Array<{ id: number; name: string }> }>(
      'GET',
      '/api/instruments',
    );
    const counter = instruments.find((i) => i.name === 'Counter C-1')!;
    const created = await api<{ id: number; simulated: boolean }>('POST', '/api/captures', {
      dutId: dut.id,
      checkpointId: cps[0].id,
      instrumentId: counter.id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      ambientC: 23.1,
      linkProfile: profile,
    });
    simulatedId = created.id;
    const readings = Array.from({ length: 600 }, (_, seq) => ({
      seq,
      t: seq,
      value: dut.nominal * (1 + 3.2e-6 + 1e-9 * Math.sin(seq / 7)),
      ...(seq % 50 === 7 ? { flags: 1 } : {}),
    }));
    await api('POST', `/api/captures/${simulatedId}/readings`, { readings });
    await api('POST', `/api/captures/${simulatedId}/finish`);
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('seeks the replay by click, arrow keys and drag, without jumping back while playing, and ends at 600 of 600', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT, session: engineer });
    await page.goto(`${server.url}/captures/${simulatedId}/live?mode=replay`);
    const slider = page.locator('[data-testid="replay-seek"]');
    await slider.locator('.el-slider__runway').waitFor();
    await expect.poll(() => page.locator('[data-testid="replay-toggle"]').isEnabled()).toBe(true);
    expect(await shownSeconds(page)).toBe(0);

    // A click three quarters along the bar moves the play head there. (The click is repeated
    // until it lands: on a loaded machine the bar may still be laid out when it is first read.)
    await expect
      .poll(async () => {
        const box = (await slider.locator('.el-slider__runway').boundingBox())!;
        await page.mouse.click(box.x + box.width * 0.75, box.y + box.height / 2);
        return shownSeconds(page);
      })
      .toBeGreaterThan(420);
    const box = (await slider.locator('.el-slider__runway').boundingBox())!;
    const clicked = await shownSeconds(page);
    expect(clicked).toBeLessThan(480);

    // Arrow keys step it.
    await slider.locator('.el-slider__button-wrapper').focus();
    await page.keyboard.press('ArrowLeft');
    await page.keyboard.press('ArrowLeft');
    await expect.poll(() => shownSeconds(page)).toBeLessThan(clicked);

    // A drag to a quarter, while playing at 1×: the handle stays where it was let go.
    await page.click('[data-testid="replay-toggle"]');
    const handle = (await slider.locator('.el-slider__button').boundingBox())!;
    await page.mouse.move(handle.x + handle.width / 2, handle.y + handle.height / 2);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width * 0.4, box.y + box.height / 2, { steps: 5 });
    await page.waitForTimeout(400); // several play-head ticks while held
    await page.mouse.move(box.x + box.width * 0.25, box.y + box.height / 2, { steps: 5 });
    await page.mouse.up();
    await page.waitForTimeout(600);
    const dragged = await shownSeconds(page);
    expect(dragged).toBeGreaterThan(130);
    expect(dragged).toBeLessThan(170); // near 150 s (a quarter of 599 s), plus a second of play
    await page.screenshot({ path: path.join(RESULTS, 'replay-seek.png') });

    // Play to the end at 1000×: every stored reading counted, flagged ones included.
    await page.click('[data-testid="replay-speed"] >> text=1000×');
    await expect
      .poll(() => page.locator('[data-testid="replay-count"]').innerText(), { timeout: 15_000 })
      .toMatch(/^600\s+of 600 readings/);
    await expect.poll(() => page.locator('[data-stat="n"]').innerText()).toBe('600');
    await expect.poll(() => page.locator('[data-stat="garbled"]').innerText()).toBe('12');
    expect(errors).toEqual([]);
    await page.context().close();
  }, 120_000);

  it('marks a simulated capture on its page, in the captures list and in the study matrix', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT, session: engineer });
    await page.goto(`${server.url}/captures/${simulatedId}`);
    await page.locator('.capture-page [data-testid="simulated-mark"]').first().waitFor();
    expect(await page.locator('body').innerText()).toContain('Counter C-1 (simulated)');

    await page.goto(`${server.url}/captures`);
    await page.locator('.el-table [data-testid="simulated-mark"]').first().waitFor();

    await page.goto(`${server.url}/studies/${studyId}`);
    await page.locator('.matrix [data-testid="simulated-mark"]').first().waitFor();
    expect(await page.locator('[data-testid="simulated-setting"]').innerText()).toContain(
      'Accepts simulated captures',
    );
    await page.screenshot({ path: path.join(RESULTS, 'simulated-matrix.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('starts the bench honest: the lab reference, an empty ambient that must be read, no thermometer as instrument', async () => {
    const technician = await login(server.url, 'technician');
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT, session: technician });
    await page.goto(`${server.url}/bench`);
    await page
      .locator('[data-field="reference"] .el-select__selected-item:not(.is-hidden)')
      .first()
      .waitFor();
    await expect.poll(() => page.locator('[data-field="reference"]').innerText()).toContain('GPS');
    expect(await page.locator('[data-field="ambient"] input').inputValue()).toBe('');
    await page.click('[data-field="instrument"] .el-select__wrapper');
    const options = await page.locator('.el-select-dropdown__item:visible').allInnerTexts();
    expect(options.some((o) => /thermometer/i.test(o))).toBe(false);
    expect(options.some((o) => /Counter C-1/.test(o))).toBe(true);
    await page.keyboard.press('Escape');
    const note = await page.locator('.bench-setup').innerText();
    expect(note).not.toContain('xtal-16m');
    expect(note).not.toContain('checkpoint 0');
    await page.click('button:has-text("Start capture")');
    await page.waitForSelector('text=Read the bench thermometer and enter the ambient temperature');
    await page.screenshot({ path: path.join(RESULTS, 'bench-defaults.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('offers the way back from a study or capture that does not exist', async () => {
    const { page } = await openPage(browser, {
      viewport: VIEWPORT,
      session: engineer,
      ignoreErrors: [/404/],
    });
    await page.goto(`${server.url}/studies/987654`);
    await page.waitForSelector('text=There is no study 987654');
    expect(await page.locator('text=Try again').count()).toBe(0);
    expect(await page.locator('text=Capture on the bench').count()).toBe(0);
    await page.click('[data-action="missing"]');
    await expect.poll(() => page.url()).toMatch(/\/studies$/);

    await page.goto(`${server.url}/captures/987654`);
    await page.waitForSelector('text=There is no capture 987654');
    expect(await page.locator('text=Try again').count()).toBe(0);
    await page.goto(`${server.url}/captures/987654/live?mode=replay`);
    await page.waitForSelector('text=There is no capture 987654');
    expect(await page.locator('text=Open the capture').count()).toBe(0);
    await page.context().close();
  });

  it('opens a new study as soon as it is created', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT, session: engineer });
    await page.goto(`${server.url}/studies`);
    await page.click('button:has-text("New study")');
    const dialog = page.locator('.el-dialog');
    await dialog.locator('input').first().fill('Conformal coat — field returns');
    await dialog.locator('button:has-text("Create study")').click();
    await page.waitForURL(/\/studies\/\d+$/);
    await page.waitForSelector('h1:has-text("Conformal coat — field returns")');
    expect(await page.locator('[data-testid="simulated-setting"]').innerText()).toContain(
      'Real instruments only',
    );
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('keeps one glossary on the Help page, reachable from the rail', async () => {
    const viewer = await login(server.url, 'viewer');
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT, session: viewer });
    await page.goto(`${server.url}/`);
    await page.click('nav[aria-label="Main"] >> text=Help');
    await page.waitForSelector('[data-term="Flagged reading"]');
    await page.fill('input[aria-label="Find a word"]', 'garbled');
    await expect
      .poll(() => page.locator('[data-term]').allInnerTexts())
      .toEqual([expect.stringContaining('Flagged reading')]);
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
