import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, apiAs, launchChromium, openPage, signIn } from '../helpers/browser.js';

// Issue 13, no stranded captures and plan to bench in one click, in a real Chromium: a technician
// leaves the bench mid-capture, is warned, goes on (the capture keeps recording and the rail says
// so), comes back and finishes with every reading stored; a reload mid-capture resumes it; a lead
// aborts a stranded capture from its page; "Capture on the bench" and an empty matrix cell open
// the bench with the study, checkpoint and DUT chosen.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
const VIEWPORT = { width: 1440, height: 940 };
const STUDY = 'Aqueous ultrasonic wash';

async function radio(page: Page, field: string, text: string): Promise<void> {
  await page.locator(`[data-field="${field}"] .el-radio-button`, { hasText: text }).first().click();
}
async function statN(page: Page): Promise<number> {
  return Number((await page.locator('[data-stat="n"]').innerText()).replace(/\D/g, ''));
}
async function selected(page: Page, field: string): Promise<string> {
  return page.locator(`[data-field="${field}"] .el-select__wrapper`).innerText();
}
async function dbReadings(captureId: number): Promise<{ n: number; max: number }> {
  const { rows } = await server.server.db.pool.query<{ n: number; max: number }>(
    'SELECT count(*)::int AS n, COALESCE(max(seq), -1)::int AS max FROM readings WHERE capture_id = $1',
    [captureId],
  );
  return rows[0];
}

/** Sets the bench up for a fast simulated capture the operator stops, and starts it. */
async function startCapture(page: Page): Promise<number> {
  await page.waitForSelector('[data-testid="start-capture"]');
  await expect.poll(() => selected(page, 'study')).toContain(STUDY);
  await radio(page, 'link-kind', 'Simulator');
  await radio(page, 'acceleration', '10×');
  await radio(page, 'mode', 'Talk-only');
  await page.fill('[data-field="gate"] input', '0.1');
  await page.press('[data-field="gate"] input', 'Tab');
  await radio(page, 'target', 'I stop it');
  await page.fill('[data-field="ambient"] input', '22.8');
  await page.press('[data-field="ambient"] input', 'Tab');
  await page.click('[data-testid="start-capture"]');
  await expect.poll(() => statN(page), { timeout: 15_000 }).toBeGreaterThan(100);
  return Number(await page.locator('[data-testid="capture-id"]').innerText());
}

describe('no stranded captures; plan to bench in one click', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
  });
  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('warns before leaving the bench, keeps capturing on other pages, and finishes with every reading stored', async () => {
    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'technician', '/bench');
    await page.waitForURL(/\/bench/);
    const id = await startCapture(page);

    // Closing or reloading the tab asks first while the capture records.
    const unloadAsks = await page.evaluate(() => {
      const e = new Event('beforeunload', { cancelable: true });
      (globalThis as unknown as { dispatchEvent(ev: Event): boolean }).dispatchEvent(e);
      return e.defaultPrevented;
    });
    expect(unloadAsks).toBe(true);

    // A rail link asks first; "stay" keeps the bench.
    await page.click('.nav-rail--docked a[title="Studies"]');
    const box = page.locator('.el-message-box');
    await box.waitFor();
    expect(await box.innerText()).toContain('Leave the bench?');
    await page.screenshot({ path: path.join(RESULTS, 'bench-leave-warning.png') });
    await box.locator('button', { hasText: 'Stay on the bench' }).click();
    await box.waitFor({ state: 'hidden' });
    expect(new URL(page.url()).pathname).toBe('/bench');

    // Going on: the capture keeps recording in the background and the rail shows it.
    await page.click('.nav-rail--docked a[title="Studies"]');
    await page
      .locator('.el-message-box:visible button', { hasText: 'Leave, keep capturing' })
      .click();
    await page.waitForURL(/\/studies$/);
    const rail = page.locator('.nav-rail--docked [data-testid="rail-capturing"]');
    await expect.poll(() => rail.innerText()).toContain(`Capturing · #${id}`);
    const away = (await dbReadings(id)).n;
    await expect
      .poll(async () => (await dbReadings(id)).n, { timeout: 10_000 })
      .toBeGreaterThan(away + 20);
    await page.screenshot({ path: path.join(RESULTS, 'rail-capturing.png') });

    // Back on the bench through the rail: the same capture, still live; stop and finish.
    await rail.click();
    await page.waitForURL(/\/bench/);
    expect(Number(await page.locator('[data-testid="capture-id"]').innerText())).toBe(id);
    await expect.poll(() => statN(page), { timeout: 10_000 }).toBeGreaterThan(away + 20);
    await page.click('[data-testid="stop-capture"]');
    await page.waitForSelector('[data-testid="open-capture"]', { timeout: 30_000 });
    const benchN = await statN(page);
    const stored = await dbReadings(id);
    expect(stored.n).toBe(benchN);
    expect(stored.max).toBe(benchN - 1);
    const { call: api } = await apiAs(server.url, 'technician');
    const c = await api<{ state: string; readingCount: number }>('GET', `/api/captures/${id}`);
    expect(c.state).toBe('finished');
    expect(c.readingCount).toBe(benchN);
    await expect
      .poll(() => page.locator('.nav-rail--docked [data-testid="rail-capturing"]').count())
      .toBe(0);

    // The bench offers the next DUT of the same checkpoint in one click.
    const next = page.locator('[data-testid="next-dut"]');
    await next.waitFor();
    const nextLabel = (await next.innerText()).replace(/^Next DUT:\s*/, '').trim();
    await page.screenshot({ path: path.join(RESULTS, 'bench-next-dut.png') });
    await next.click();
    await page.waitForSelector('[data-testid="start-capture"]');
    await expect.poll(() => selected(page, 'dut')).toContain(nextLabel);
    expect(await selected(page, 'checkpoint')).toContain('Baseline');
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('resumes a capture after a reload and keeps its readings contiguous', async () => {
    const { page } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'technician', '/bench');
    await page.waitForURL(/\/bench/);
    const id = await startCapture(page);
    page.on('dialog', (d) => void d.accept());
    await page.reload();
    const banner = page.locator('[data-testid="resume-capture"]');
    await banner.waitFor();
    expect(await banner.innerText()).toContain(`Capture ${id}`);
    await page.screenshot({ path: path.join(RESULTS, 'bench-resume.png') });
    const before = (await dbReadings(id)).n;
    await page.click('[data-testid="resume-button"]');
    await expect
      .poll(() => page.locator('[data-testid="capture-id"]').innerText(), { timeout: 15_000 })
      .toBe(String(id));
    try {
      await expect
        .poll(async () => (await dbReadings(id)).n, { timeout: 15_000 })
        .toBeGreaterThan(before + 20);
    } catch (err) {
      await page.screenshot({ path: path.join(RESULTS, 'bench-resume-failed.png') });
      throw new Error(
        `${String(err)}: ${(await page.locator('[role="alert"], [role="status"]').allInnerTexts()).join(' | ')}`,
      );
    }
    await page.click('[data-testid="stop-capture"]');
    await page.waitForSelector('[data-testid="open-capture"]', { timeout: 30_000 });
    const stored = await dbReadings(id);
    // Every stored seq from 0 on, none missing: the resumed readings follow the stored ones.
    expect(stored.max).toBe(stored.n - 1);
    const { call: api } = await apiAs(server.url, 'technician');
    const c = await api<{ state: string; readingCount: number }>('GET', `/api/captures/${id}`);
    expect(c.state).toBe('finished');
    expect(c.readingCount).toBe(stored.n);
    await page.context().close();
  });

  it('lets a lead abort a stranded capture from its page, keeping its readings', async () => {
    const { call: tech } = await apiAs(server.url, 'technician');
    const studies = await tech<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
    const study = await tech<{
      checkpoints: Array<{ id: number }>;
      duts: Array<{ id: number; label: string }>;
    }>('GET', `/api/studies/${studies.studies[0].id}`);
    const y1 = study.duts.find((d) => d.label.startsWith('Y1'))!;
    const capture = await tech<{ id: number }>('POST', '/api/captures', {
      dutId: y1.id,
      checkpointId: study.checkpoints[1].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      ambientC: 23,
    });
    const readings = Array.from({ length: 40 }, (_, i) => ({
      seq: i,
      t: i,
      value: 16e6 + 0.02 * Math.sin(i),
    }));
    await tech('POST', `/api/captures/${capture.id}/readings`, { readings });

    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'lead', `/captures/${capture.id}`);
    await page.locator('[data-action="abort"]').click();
    const dialog = page.locator('.el-dialog', { hasText: 'Abort this capture' });
    await dialog.waitFor();
    expect(await dialog.locator('[data-testid="abort-confirm"]').isDisabled()).toBe(true);
    await dialog.locator('textarea').fill('Left running over the weekend; the fixture was moved');
    await page.screenshot({ path: path.join(RESULTS, 'capture-abort-dialog.png') });
    await dialog.locator('[data-testid="abort-confirm"]').click();
    await page.locator('[data-testid="aborted-note"]').waitFor();
    expect(await page.locator('[data-testid="aborted-note"]').innerText()).toContain(
      'Left running over the weekend',
    );
    await expect
      .poll(() => page.locator('.capture-state').first().innerText())
      .toContain('Aborted');
    expect(await page.locator('[data-action="abort"]').count()).toBe(0);
    await page.screenshot({ path: path.join(RESULTS, 'capture-aborted.png') });

    const { rows } = await server.server.db.pool.query<{
      state: string;
      abort_reason: string;
      n: number;
    }>(
      `SELECT c.state, c.abort_reason, (SELECT count(*)::int FROM readings r WHERE r.capture_id = c.id) AS n FROM captures c WHERE c.id = $1`,
      [capture.id],
    );
    expect(rows[0]).toEqual({
      state: 'aborted',
      abort_reason: 'Left running over the weekend; the fixture was moved',
      n: 40,
    });
    const audit = await server.server.db.pool.query(
      "SELECT 1 FROM audit_events WHERE action = 'capture.abort' AND subject_id = $1",
      [capture.id],
    );
    expect(audit.rowCount).toBe(1);
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('opens the bench on the study it came from, and an empty matrix cell with its checkpoint and DUT', async () => {
    // A second study, so the bench's remembered study is not the one asked for.
    const { call: eng } = await apiAs(server.url, 'engineer');
    const other = await eng<{ id: number }>('POST', '/api/studies', {
      title: 'Bake-out drift check',
      allowSimulated: true,
    });
    await eng('POST', `/api/studies/${other.id}/checkpoints`, { name: 'Before bake' });
    const after = await eng<{ id: number }>('POST', `/api/studies/${other.id}/checkpoints`, {
      name: 'After 48 h bake',
    });
    await eng('POST', `/api/studies/${other.id}/duts`, {
      label: 'X7 25 MHz oscillator',
      kind: 'oscillator',
      nominal: 25e6,
      unit: 'Hz',
      limit: 2,
      limitUnit: 'ppm',
    });
    const x8 = await eng<{ id: number }>('POST', `/api/studies/${other.id}/duts`, {
      label: 'X8 25 MHz oscillator',
      kind: 'oscillator',
      nominal: 25e6,
      unit: 'Hz',
      limit: 2,
      limitUnit: 'ppm',
    });

    const { page, errors } = await openPage(browser, { viewport: VIEWPORT });
    await signIn(page, server.url, 'technician', '/bench');
    await page.waitForSelector('[data-testid="start-capture"]');
    // The bench remembers the demo study as the last one used.
    await page.click('[data-field="study"] .el-select__wrapper');
    await page.locator('.el-select-dropdown__item:visible', { hasText: STUDY }).first().click();
    await expect.poll(() => selected(page, 'study')).toContain(STUDY);
    await page.waitForTimeout(300);

    await page.goto(`${server.url}/studies/${other.id}`);
    await page.locator('[data-action="bench"]').click();
    await page.waitForURL(new RegExp(`/bench\\?study=${other.id}`));
    await expect.poll(() => selected(page, 'study')).toContain('Bake-out drift check');

    await page.goto(`${server.url}/studies/${other.id}`);
    const cell = page.locator(`tr[data-dut="${x8.id}"] [data-action="capture-cell"]`).nth(1);
    await cell.waitFor();
    await page.screenshot({ path: path.join(RESULTS, 'matrix-empty-cells.png'), fullPage: true });
    await cell.click();
    await page.waitForURL(/\/bench\?/);
    const q = new URL(page.url()).searchParams;
    expect([q.get('study'), q.get('checkpoint'), q.get('dut')]).toEqual([
      String(other.id),
      String(after.id),
      String(x8.id),
    ]);
    await expect.poll(() => selected(page, 'study')).toContain('Bake-out drift check');
    await expect.poll(() => selected(page, 'checkpoint')).toContain('After 48 h bake');
    await expect.poll(() => selected(page, 'dut')).toContain('X8 25 MHz oscillator');
    await page.screenshot({ path: path.join(RESULTS, 'bench-from-matrix.png') });
    expect(errors).toEqual([]);
  });
});
