import { readFileSync } from 'node:fs';
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

// Every page of the route table, as every role, on a phone (390 × 844) and a tablet (820 × 1180):
// the page never scrolls sideways and the main menu can be reached — the top bar's menu on the
// phone, the narrow rail on the tablet. The routes are read from src/router/index.ts, so a page
// added later is visited without touching this test.
const ROLES = ['admin', 'lead', 'engineer', 'technician', 'viewer'] as const;
const PHONE = { width: 390, height: 844 };
const TABLET = { width: 820, height: 1180 };

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
/** A page to visit; `bare` pages (a printable report, the forced password change) have no shell and no menu. */
interface Visit {
  path: string;
  bare: boolean;
}
let paths: Visit[] = [];
let ids = { later: 0, open: 0 };
/**
 * Candidates for the README's phone screenshots: written to test-results/ with the rest, never
 * into docs/ (a test run must not change the repository); a chosen one is copied by hand.
 */
const SCREENSHOTS = RESULTS;

/** The app's route paths with their numeric parameters filled in from the seeded lab. */
function routePaths(ids: { study: number; capture: number; open: number }): Visit[] {
  const source = readFileSync(path.resolve('src/router/index.ts'), 'utf8');
  const out = new Map<string, boolean>();
  // Each route record from its `path:` to the next one; its meta says whether it is bare.
  const records = source.split(/(?=\n\s*\{\s*\n\s*path:)/);
  for (const record of records) {
    const p = /path:\s*'([^']+)'/.exec(record)?.[1];
    if (!p || p === '/sign-in' || p.includes('pathMatch')) continue;
    const filled = p.replace(/:(\w+)\([^)]*\)|:(\w+)/g, () =>
      String(p.startsWith('/captures') ? ids.capture : ids.study),
    );
    out.set(filled, /bare:\s*true|public:\s*true/.test(record));
  }
  // An open capture watched live, a finished one replayed, and a page that does not exist.
  out.set(`/captures/${ids.open}/live`, false);
  out.set(`/captures/${ids.capture}/live?mode=replay`, false);
  out.set('/no-such-page', false);
  return [...out].map(([p, bare]) => ({ path: p, bare }));
}

/** Horizontal overflow of the page itself (not of boxes that scroll on their own). */
function pageOverflow(page: Page): Promise<number> {
  return page.evaluate(
    'document.documentElement.scrollWidth - document.documentElement.clientWidth',
  ) as Promise<number>;
}

async function settle(page: Page, url: string, bare = false): Promise<void> {
  await page.goto(url);
  await page.waitForSelector(bare ? 'h1' : '#main h1', { timeout: 40_000 }).catch((err: Error) => {
    throw new Error(`${url}: no page title within 40 s (${err.message.split('\n')[0]})`);
  });
  // Charts and tables size themselves once their data arrives.
  await page.waitForLoadState('networkidle').catch(() => undefined);
  await page.waitForTimeout(250);
}

describe('layout on phones and tablets', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    const api = apiWith(server.url, (await login(server.url, 'engineer')).token);
    const { studies } = await api<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
    const study = await api<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; nominal: number }>;
    }>('GET', `/api/studies/${studies[0].id}`);
    const cps = [...study.checkpoints].sort((a, b) => a.order - b.order);
    const dut = study.duts[0];
    const finished = await api<{ id: number }>('POST', '/api/captures', {
      dutId: dut.id,
      checkpointId: cps[0].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      ambientC: 23.2,
    });
    const readings = Array.from({ length: 400 }, (_, seq) => ({
      seq,
      t: seq,
      value: dut.nominal * (1 + 1e-7 + 1e-9 * Math.sin(seq)),
    }));
    await api('POST', `/api/captures/${finished.id}/readings`, { readings });
    await api('POST', `/api/captures/${finished.id}/finish`);
    // A later checkpoint 0.3 ppm away: its page carries a verdict against the baseline above.
    const later = await api<{ id: number }>('POST', '/api/captures', {
      dutId: dut.id,
      checkpointId: cps[2].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      ambientC: 23.6,
    });
    await api('POST', `/api/captures/${later.id}/readings`, {
      readings: readings.map((r) => ({ ...r, value: r.value * (1 + 3e-7) })),
    });
    await api('POST', `/api/captures/${later.id}/finish`);
    const open = await api<{ id: number }>('POST', '/api/captures', {
      dutId: dut.id,
      checkpointId: cps[1].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      ambientC: 23.4,
    });
    await api('POST', `/api/captures/${open.id}/readings`, { readings: readings.slice(0, 30) });
    paths = routePaths({ study: studies[0].id, capture: later.id, open: open.id });
    ids = { later: later.id, open: open.id };
  }, 120_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it.each(ROLES)(
    'a %s on a phone: no page scrolls sideways, and the menu opens from the top bar',
    async (role) => {
      const session: Session = await login(server.url, role);
      const { page, errors } = await openPage(browser, { viewport: PHONE, session });
      const wide: string[] = [];
      for (const { path: p, bare } of paths) {
        await settle(page, `${server.url}${p}`, bare);
        const over = await pageOverflow(page);
        if (over > 0) wide.push(`${p}: ${over}px`);
        if (bare) continue;
        // The rail is gone; the menu button sits in the top bar, on screen.
        expect(await page.locator('.nav-rail--docked').isVisible(), p).toBe(false);
        const menu = page.getByRole('button', { name: 'Menu' });
        expect(await menu.isVisible(), p).toBe(true);
        const box = (await menu.boundingBox())!;
        expect(box.x + box.width, p).toBeLessThanOrEqual(PHONE.width);
      }
      expect(wide).toEqual([]);

      // The drawer lists the role's pages and takes the technician there.
      await settle(page, `${server.url}/`);
      await page.getByRole('button', { name: 'Menu' }).click();
      const nav = page.locator('.app-menu nav[aria-label="Main"]');
      await nav.waitFor();
      expect(await nav.locator('a').allInnerTexts()).toContain('Captures');
      await page.screenshot({ path: path.join(RESULTS, `phone-menu-${role}.png`) });
      await nav.locator('a', { hasText: 'Captures' }).click();
      await page.waitForURL(/\/captures$/);
      await expect.poll(() => nav.isVisible()).toBe(false);
      if (role === 'technician') {
        // For the README: a verdict read on a phone, a capture watched on a phone, and the menu.
        await settle(page, `${server.url}/captures/${ids.later}`);
        await page.locator('[data-verdict]').first().waitFor();
        await page.screenshot({ path: path.join(SCREENSHOTS, 'readme-phone-verdict.png') });
        await settle(page, `${server.url}/captures/${ids.open}/live`);
        await page.locator('[data-testid="watch-state"]').waitFor();
        await page.screenshot({ path: path.join(SCREENSHOTS, 'readme-phone-watch.png') });
        await page.getByRole('button', { name: 'Menu' }).click();
        await page.locator('.app-menu nav[aria-label="Main"]').waitFor();
        await page.waitForTimeout(400);
        await page.screenshot({ path: path.join(SCREENSHOTS, 'readme-phone-menu.png') });
      }
      expect(errors.filter((e) => !/status of 40[34]/.test(e))).toEqual([]);
      await page.context().close();
    },
    360_000,
  );

  it.each(ROLES)(
    'a %s on a tablet: no page scrolls sideways, and the narrow rail stays in reach',
    async (role) => {
      const session: Session = await login(server.url, role);
      const { page } = await openPage(browser, { viewport: TABLET, session });
      const wide: string[] = [];
      for (const { path: p, bare } of paths) {
        await settle(page, `${server.url}${p}`, bare);
        const over = await pageOverflow(page);
        if (over > 0) wide.push(`${p}: ${over}px`);
        if (bare) continue;
        const rail = page.locator('.nav-rail--docked');
        expect(await rail.isVisible(), p).toBe(true);
        const box = (await rail.boundingBox())!;
        expect(box.width, p).toBeLessThan(100);
        expect(await page.getByRole('button', { name: 'Menu' }).isVisible(), p).toBe(false);
      }
      expect(wide).toEqual([]);
      // Each rail entry is an icon with its name kept for screen readers and as a tooltip.
      const studies = page.locator('nav[aria-label="Main"] a[title="Studies"]');
      await studies.click();
      await page.waitForURL(/\/studies$/);
      await page.context().close();
    },
    360_000,
  );
});
