import { execFileSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, launchChromium, login, openPage, type Session } from '../helpers/browser.js';
import { addStabilityAndTiltVerdicts } from '../helpers/verdictKinds.js';

// The printed study report of the demo lab's story (finished captures for every DUT at every
// checkpoint, so every kind of table is printed) in a real Chromium: laid out as print media at
// the width of the page's content box on A4 and on US Letter, no element may reach past that box
// (a budget table used to run its ν_i column past the right margin, where the paper cut it off),
// and no figure may wrap onto a second line. Every page of the PDF is rendered to PNG in
// test-results/ so a person can look at the paper.

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let lead: Session;

/** The report's @page margins (StudyReportView): 15 mm left and right. */
const SIDE_MARGINS_MM = 30;
const PAPERS = [
  // ISO 216: A4 is 210 mm wide; ANSI/ASME Y14.1: US Letter is 8.5 in = 215.9 mm wide.
  { name: 'A4', widthMm: 210 },
  { name: 'Letter', widthMm: 215.9 },
] as const;
/** CSS px per mm: 96 px per inch, 25.4 mm per inch (CSS Values and Units, absolute lengths). */
const PX_PER_MM = 96 / 25.4;

interface Fault {
  what: string;
  width: number;
  room: number;
}

async function openReport(
  paper: (typeof PAPERS)[number],
): Promise<{ page: Page; errors: string[] }> {
  const width = Math.floor((paper.widthMm - SIDE_MARGINS_MM) * PX_PER_MM);
  const { page, errors } = await openPage(browser, {
    viewport: { width, height: 1100 },
    session: lead,
  });
  await page.goto(`${server.url}/studies/1/report`);
  await page.waitForSelector('[data-testid="report"]');
  await page.waitForSelector('.rplot__svg');
  await page.locator('#paper .el-radio-button', { hasText: paper.name }).click();
  await page.emulateMedia({ media: 'print' });
  return { page, errors };
}

// The browser-side scripts are strings: the tests' TypeScript has no DOM types.

/** Every element of the report wider than the sheet's content box, or scrolling sideways. */
function overflowing(page: Page): Promise<Fault[]> {
  return page.evaluate(`(() => {
    const sheet = document.querySelector('[data-testid="report"]');
    const outer = sheet.getBoundingClientRect();
    const pad = getComputedStyle(sheet);
    // The sheet's content box: on paper the sheet has no padding; on screen it draws the margins.
    const box = {
      left: outer.left + parseFloat(pad.paddingLeft),
      right: outer.right - parseFloat(pad.paddingRight),
      width: outer.width - parseFloat(pad.paddingLeft) - parseFloat(pad.paddingRight),
    };
    const faults = [];
    const name = (el) => {
      const heading = el.closest('section')?.querySelector('h2')?.textContent?.trim() ?? '';
      const cls = typeof el.className === 'string' ? el.className : '';
      return el.tagName.toLowerCase() + '.' + cls.split(' ').join('.') + ' in "' + heading + '"';
    };
    // The sheet itself must be as wide as the viewport (the content box): no sideways scroll.
    if (document.documentElement.scrollWidth > document.documentElement.clientWidth + 1)
      faults.push({
        what: 'the page scrolls sideways',
        width: document.documentElement.scrollWidth,
        room: document.documentElement.clientWidth,
      });
    for (const el of Array.from(sheet.querySelectorAll('*'))) {
      const r = el.getBoundingClientRect();
      // Nothing to see: empty boxes and the visually hidden captions kept for screen readers.
      if (r.width <= 1 || r.height <= 1) continue;
      if (r.right > box.right + 1 || r.left < box.left - 1)
        faults.push({ what: name(el), width: Math.round(r.right - box.left), room: box.width });
      if (el instanceof HTMLElement && el.scrollWidth > el.clientWidth + 1) {
        const style = getComputedStyle(el);
        // Inline boxes and table cells report clientWidth 0 or their own box; only boxes that
        // clip or scroll hide a part of what they hold.
        if (style.overflowX !== 'visible')
          faults.push({
            what: name(el) + ' (clipped)',
            width: el.scrollWidth,
            room: el.clientWidth,
          });
      }
    }
    return faults;
  })()`);
}

/** Figure cells (numbers with their unit) that break onto a second line. */
function wrappedFigures(page: Page): Promise<string[]> {
  return page.evaluate(`(() => {
    const sheet = document.querySelector('[data-testid="report"]');
    // The DUT table's limit cell is a sentence of several limits and may wrap between them.
    const cells = sheet.querySelectorAll(
      'td.db-tabular:not([data-figure="limits"]), .budget td:not(.budget__text)',
    );
    const wrapped = [];
    for (const cell of Array.from(cells)) {
      const text = cell.textContent?.trim() ?? '';
      if (!text) continue;
      const range = document.createRange();
      range.selectNodeContents(cell);
      const tops = new Set(
        Array.from(range.getClientRects())
          .filter((r) => r.width > 0)
          .map((r) => Math.round(r.top)),
      );
      // Sub- and superscripts sit a few px off the line: count lines more than 6 px apart.
      const lines = [...tops]
        .sort((a, b) => a - b)
        .filter((t, i, all) => i === 0 || t - all[i - 1] > 6);
      if (lines.length > 1) wrapped.push(text.replace(/\\s+/g, ' '));
    }
    return wrapped;
  })()`);
}

describe('the printed study report fits the paper', () => {
  beforeAll(async () => {
    server = await startTestServer({ demoStory: true });
    browser = await launchChromium();
    lead = await login(server.url, 'lead');
    // One more baseline capture of the crystal, white FM of 1 ppb at 1 s over 600 readings (the
    // budget that ran past the right margin of A4), the crystal's stability limit and the
    // accelerometer's tilt checks: every report table is printed.
    await addStabilityAndTiltVerdicts(server.url);
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  for (const paper of PAPERS) {
    it(`keeps every table inside the content box of ${paper.name} portrait`, async () => {
      const { page, errors } = await openReport(paper);
      // The demo story prints budget tables: the widest tables of the report are there.
      expect(await page.locator('.budget').count()).toBeGreaterThan(0);
      expect(await page.locator('.report-table').count()).toBeGreaterThan(3);
      await page.waitForSelector('[data-testid="report-stability-limits"]');
      await page.waitForSelector('[data-testid="report-tilt-checks"]');
      // The check sees a box past the margin: a 2 000 px wide line put into the sheet is found.
      await page.evaluate(`(() => {
        const probe = document.createElement('div');
        probe.id = 'overflow-probe';
        probe.style.width = '2000px';
        probe.style.height = '4px';
        document.querySelector('[data-testid="report"]').appendChild(probe);
      })()`);
      expect((await overflowing(page)).map((f) => f.what)).toContain('div. in ""');
      await page.evaluate(`document.getElementById('overflow-probe').remove()`);
      expect(await overflowing(page)).toEqual([]);
      expect(await wrappedFigures(page)).toEqual([]);
      expect(errors).toEqual([]);
      await page.context().close();
    });
  }

  it('keeps the same tables inside the sheet on screen', async () => {
    const { page, errors } = await openPage(browser, {
      viewport: { width: 1360, height: 900 },
      session: lead,
    });
    await page.goto(`${server.url}/studies/1/report`);
    await page.waitForSelector('[data-testid="report"]');
    await page.waitForSelector('.rplot__svg');
    expect(await overflowing(page)).toEqual([]);
    expect(await wrappedFigures(page)).toEqual([]);
    const budget = page.locator('.budget').first();
    await budget.scrollIntoViewIfNeeded();
    await budget.screenshot({ path: path.join(RESULTS, 'report-screen-budget.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('prints every page of the report, A4 and Letter, to PNG', async () => {
    for (const paper of PAPERS) {
      const { page, errors } = await openReport(paper);
      const file = path.join(RESULTS, `report-print-${paper.name.toLowerCase()}.pdf`);
      writeFileSync(
        file,
        await page.pdf({ preferCSSPageSize: true, printBackground: true, format: paper.name }),
      );
      const info = execFileSync('pdfinfo', [file]).toString('utf8');
      const pages = Number(/Pages:\s+(\d+)/.exec(info)?.[1]);
      // The size chosen on the page is the size printed: 595 × 842 pt (A4), 612 × 792 pt (Letter).
      const [w, h] = (/Page size:\s+([\d.]+) x ([\d.]+)/.exec(info) ?? []).slice(1).map(Number);
      expect([Math.round(w), Math.round(h)]).toEqual(paper.name === 'A4' ? [595, 842] : [612, 792]);
      expect(pages).toBeGreaterThan(3);
      execFileSync('pdftoppm', [
        '-r',
        '70',
        '-png',
        file,
        path.join(RESULTS, `report-print-${paper.name.toLowerCase()}`),
      ]);
      // Every page carries its footer: nothing was pushed off the end of the paper.
      const text = execFileSync('pdftotext', ['-raw', file, '-']).toString('utf8');
      for (let n = 1; n <= pages; n++) expect(text).toContain(`Page ${n} of ${pages}`);
      // The signature line shares its page with the decision rule it closes (on A4 it stood alone
      // on the last page).
      const last = execFileSync('pdftotext', [
        '-f',
        `${pages}`,
        '-l',
        `${pages}`,
        '-raw',
        file,
        '-',
      ]).toString('utf8');
      expect(last).toContain('Not approved. No signature.');
      expect(last).toContain('8. Decision rule');
      expect(errors).toEqual([]);
      await page.context().close();
    }
  });
});
