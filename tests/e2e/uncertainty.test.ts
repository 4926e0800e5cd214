import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
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

// Issue 8 in a real Chromium: a tuning fork captured at 20 °C and again at 30 °C. The capture page
// shows the budget with k from ν_eff, its coverage sentence and each line's source; the comparison
// shows Δ's own budget with T0 and B as shared inputs; the drift control re-reduces the capture;
// the lab page carries counter types and the references' ageing.
const F0 = 32_768;

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let lead: Session;
let afterId: number;

async function record(
  api: Api,
  ids: { dutId: number; checkpointId: number; instrumentId: number; referenceId: number },
  T: number,
  ppm: number,
  seed: number,
) {
  const c = await api<{ id: number }>('POST', '/api/captures', {
    ...ids,
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
    ambientC: T,
  });
  const g = gaussian(seed);
  // The part's frequency at T follows its parabola (B = −0.034 ppm/°C², T0 = 25 °C) plus ppm of real change.
  const y = (ppm - 0.034 * (T - 25) ** 2) * 1e-6;
  const readings = Array.from({ length: 1200 }, (_, i) => ({
    seq: i,
    t: i,
    value: F0 * (1 + y + 2e-9 * g() + 2e-12 * i),
  }));
  await api('POST', `/api/captures/${c.id}/readings`, { readings });
  await api('POST', `/api/captures/${c.id}/finish`);
  return c.id;
}

describe('the uncertainty a metrologist signs, on screen', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    lead = await login(server.url, 'lead');
    const api = apiWith(server.url, lead.token);
    const { studies } = await api<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
    const study = await api<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string }>;
    }>('GET', `/api/studies/${studies[0].id}`);
    const checkpoints = [...study.checkpoints].sort((a, b) => a.order - b.order);
    const dutId = study.duts.find((d) => d.label.startsWith('Y3'))!.id;
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
    await record(api, { ...ids, checkpointId: checkpoints[0].id }, 20, 0, 31);
    afterId = await record(api, { ...ids, checkpointId: checkpoints[1].id }, 30, 0.1, 32);
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows k from ν_eff, the coverage, the sources and Δ’s shared tuning-fork lines', async () => {
    const { page, errors } = await openPage(browser, {
      session: lead,
      viewport: { width: 1360, height: 2400 },
    });
    await page.goto(`${server.url}/captures/${afterId}`);
    await page
      .waitForSelector('[aria-labelledby="budget-title"] [data-budget="coverage"]', {
        timeout: 60_000,
      })
      .catch(async (e) => {
        console.log(
          'ERRORS',
          errors,
          await page.locator('[aria-labelledby="budget-title"]').innerText(),
        );
        throw e;
      });
    const coverage = await page
      .locator('[aria-labelledby="budget-title"] [data-budget="coverage"]')
      .innerText();
    expect(coverage).toMatch(/k = \d\.\d\d (from|with) ν_eff (=|>) .*coverage/);
    const budget = await page.locator('[aria-labelledby="budget-title"] .budget').innerText();
    expect(budget).toContain('Counter resolution');
    expect(budget).toContain('Drift during the capture');
    expect(budget).toMatch(/Source: Counter theory/);
    // The comparison with the baseline: Δ's budget with T0 and B booked once, and the verdict.
    await page.waitForSelector('[data-compare="budget"]');
    const delta = await page.locator('[data-compare="budget"]').innerText();
    expect(delta).toContain('Turnover temperature T0 (shared)');
    expect(delta).toContain('Parabolic coefficient B (shared)');
    expect(delta).toContain('Thermometer bias (shared)');
    expect(delta).toMatch(/JCGM 100:2008 §5\.2 eq\. 16/);
    expect(await page.locator('[data-compare="coverage"]').innerText()).toMatch(/^k = /);
    // 0.1 ppm of change against ±1 ppm, with T0 uncertain and 10 °C between captures: not "within".
    expect(await page.locator('.comparison__body').getAttribute('data-verdict')).toBe(
      'inconclusive',
    );
    await page.waitForSelector('[aria-labelledby="budget-title"] .budget');
    await page.screenshot({
      path: path.join(RESULTS, 'issue8-capture-budget.png'),
      fullPage: true,
    });
    await page
      .locator('[aria-labelledby="budget-title"]')
      .screenshot({ path: path.join(RESULTS, 'issue8-budget-section.png') });
    await page
      .locator('.comparison')
      .screenshot({ path: path.join(RESULTS, 'issue8-comparison.png') });

    // The drift control re-reduces the capture: without removal the budget has no drift line.
    await page.locator('[data-control="drift"] label', { hasText: 'no drift removal' }).click();
    const ownBudget = () => page.locator('[aria-labelledby="budget-title"] .budget').innerText();
    await expect.poll(ownBudget, { timeout: 30_000 }).not.toContain('Drift during the capture');
    expect(await page.locator('[data-budget="drift-model"]').innerText()).toMatch(
      /No drift removed/,
    );
    await page.locator('[data-control="drift"] label', { hasText: 'quadratic' }).click();
    await expect.poll(ownBudget, { timeout: 30_000 }).toContain('quadratic drift');
    expect(errors).toEqual([]);
  }, 90_000);

  it('lets a lead record a counter type and a reference with its ageing on the lab page', async () => {
    const { page, errors } = await openPage(browser, {
      session: lead,
      viewport: { width: 1360, height: 1100 },
    });
    await page.goto(`${server.url}/lab`);
    await page.waitForSelector('[data-lab="counter"]');
    expect(await page.locator('[data-lab="counter"]').first().innerText()).toMatch(
      /reciprocal, 100 ps/,
    );
    await page.click('[data-action="add-reference"]');
    const dialog = page.locator('.el-dialog', { hasText: 'Register a reference' });
    await dialog.locator('input[name="name"]').fill('Bench OCXO 10 MHz');
    await dialog.locator('[data-field="reference-kind"]').click();
    await page.locator('.el-select-dropdown__item', { hasText: 'OCXO' }).click();
    await dialog.locator('input[name="standardUncertainty"]').fill('2e-11');
    await dialog.locator('input[name="ageingPerDay"]').fill('5e-11');
    await dialog.locator('input[name="ageingUPerDay"]').fill('2e-11');
    await page.screenshot({ path: path.join(RESULTS, 'issue8-reference-dialog.png') });
    await dialog.locator('button', { hasText: 'Register' }).click();
    await page.waitForSelector('text=Bench OCXO 10 MHz');
    const row = page.locator('.el-table__row', { hasText: 'Bench OCXO 10 MHz' });
    expect(await row.locator('.lab__notes').first().innerText()).toBe('OCXO');
    expect(await row.locator('[data-lab="ageing"]').innerText()).toBe(
      '+5.0 × 10⁻¹¹ ± 2.0 × 10⁻¹¹ /day',
    );
    await page.screenshot({ path: path.join(RESULTS, 'issue8-lab.png'), fullPage: true });
    expect(errors).toEqual([]);
  }, 60_000);

  it('lets a planner give a DUT an asymmetric limit and a tuning fork its own T0', async () => {
    const { page, errors } = await openPage(browser, {
      session: lead,
      viewport: { width: 1360, height: 1100 },
    });
    const api = apiWith(server.url, lead.token);
    const { studies } = await api<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
    await page.goto(`${server.url}/studies/${studies[0].id}`);
    const fork = page.locator('[data-dut-label^="Y3"]');
    await fork.waitFor();
    expect(await fork.locator('[data-fork="parabola"]').innerText()).toMatch(
      /T0 25 ± 2\.89 °C · B -0\.034 ± 0\.00346 ppm\/°C² \(defaults\)/,
    );
    await fork.locator('button', { hasText: 'Edit' }).click();
    const dialog = page.locator('.el-dialog', { hasText: 'Edit DUT' });
    await dialog.locator('[data-field="limit-mode"] label', { hasText: 'lower / upper' }).click();
    await dialog.locator('input[name="limitLow"]').fill('-1');
    await dialog.locator('input[name="limitHigh"]').fill('2');
    await dialog.locator('input[name="turnoverC"]').fill('24.5');
    await dialog.locator('input[name="turnoverU"]').fill('0.8');
    await page.screenshot({ path: path.join(RESULTS, 'issue8-dut-dialog.png') });
    await dialog.locator('button', { hasText: 'Save DUT' }).click();
    await expect.poll(() => fork.innerText(), { timeout: 30_000 }).toContain('-1 / +2 ppm');
    expect(await fork.locator('[data-fork="parabola"]').innerText()).toMatch(/T0 24\.5 ± 0\.8 °C/);
    expect(errors).toEqual([]);
  }, 60_000);
});
