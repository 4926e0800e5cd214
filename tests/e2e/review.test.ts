import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
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
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';

// Review in a real Chromium: the engineer submits the demo study, the lead returns it with a
// comment, the engineer resubmits, the lead approves with the password. The report is printed to
// PDF by Chromium before and after approval; pdftoppm turns the first page into an image and
// pdftotext reads the title, the watermark and the page numbers back.
const NOMINAL = 32_768;
const TITLE = 'Aqueous ultrasonic wash — sensor-hub board rev C';

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let lead: Session;
let engineer: Session;
let admin: Session;

async function recordCapture(
  api: Api,
  dutId: number,
  checkpointId: number,
  offsetPpm: number,
  seed: number,
  nominal = NOMINAL,
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
    value: nominal * (1 + (offsetPpm + 0.1 * g()) * 1e-6),
  }));
  await api('POST', `/api/captures/${capture.id}/readings`, { readings });
  await api('POST', `/api/captures/${capture.id}/finish`);
  return capture.id;
}

const openAs = (session: Session) =>
  openPage(browser, { viewport: { width: 1360, height: 900 }, session });

async function studyPage(session: Session): Promise<{ page: Page; errors: string[] }> {
  const w = await openAs(session);
  await w.page.goto(`${server.url}/studies/1`);
  await w.page.waitForSelector(
    '[data-section="review"] [data-testid="review-history"], [data-section="review"] .review__empty',
  );
  return w;
}

async function reviewStep(
  page: Page,
  action: string,
  fields: { text?: string; password?: string },
) {
  await page.click(`[data-section="review"] button[data-action="${action}"]`);
  const dialog = page.locator('.el-dialog:visible');
  await dialog.waitFor();
  if (fields.password !== undefined)
    await dialog.locator('input[name="password"]').fill(fields.password);
  if (fields.text !== undefined) await dialog.locator('textarea[name="text"]').fill(fields.text);
  await dialog.locator('button[data-action="confirm-review"]').click();
  await dialog.waitFor({ state: 'hidden' });
}

const statusTag = (page: Page) =>
  page.locator('[data-section="review"] .review__state .el-tag').innerText();

/** Prints the report page to PDF (A4), renders page 1 to PNG and returns the PDF's text. */
async function printReport(
  session: Session,
  name: string,
  query = '',
): Promise<{ text: string; pages: number; png: string }> {
  const { page, errors } = await openAs(session);
  await page.goto(`${server.url}/studies/1/report${query}`);
  await page.waitForSelector('[data-testid="report"]');
  await page.waitForSelector('.rplot__svg');
  expect(await page.locator('nav[aria-label="Main"]').count()).toBe(0);
  await page.screenshot({ path: path.join(RESULTS, `${name}-screen.png`), fullPage: false });
  const pdf = await page.pdf({ format: 'A4', preferCSSPageSize: true, printBackground: true });
  const file = path.join(RESULTS, `${name}.pdf`);
  writeFileSync(file, pdf);
  execFileSync('pdftoppm', [
    '-f',
    '1',
    '-l',
    '1',
    '-r',
    '60',
    '-png',
    '-singlefile',
    file,
    path.join(RESULTS, `${name}-page1`),
  ]);
  for (const p of [2, 3]) {
    execFileSync('pdftoppm', [
      '-f',
      String(p),
      '-l',
      String(p),
      '-r',
      '60',
      '-png',
      '-singlefile',
      file,
      path.join(RESULTS, `${name}-page${p}`),
    ]);
  }
  const text = execFileSync('pdftotext', ['-raw', file, '-']).toString('utf8');
  const firstPage = execFileSync('pdftotext', ['-raw', '-f', '1', '-l', '1', file, '-']).toString(
    'utf8',
  );
  const info = execFileSync('pdfinfo', [file]).toString('utf8');
  const pages = Number(/Pages:\s+(\d+)/.exec(info)?.[1] ?? 0);
  expect(errors).toEqual([]);
  await page.context().close();
  return {
    text: firstPage + '\n----\n' + text,
    pages,
    png: path.join(RESULTS, `${name}-page1.png`),
  };
}

describe('review and sign-off in the browser', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    const technician = await apiAs(server.url, 'technician');
    lead = (await apiAs(server.url, 'lead')).session;
    engineer = (await apiAs(server.url, 'engineer')).session;
    admin = (await apiAs(server.url, 'admin')).session;
    const study = await technician.call<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string }>;
    }>('GET', '/api/studies/1');
    const checkpoints = [...study.checkpoints].sort((a, b) => a.order - b.order);
    const fork = study.duts.find((d) => d.label.startsWith('Y3'))!.id;
    const crystal = study.duts.find((d) => d.label.startsWith('Y1'))!.id;
    const offsets = [0, 0.1, 2.5];
    for (let i = 0; i < 3; i++)
      await recordCapture(technician.call, fork, checkpoints[i].id, offsets[i], 41 + i);
    await recordCapture(technician.call, crystal, checkpoints[0].id, 0, 51, 16_000_000);
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('takes files by drag and drop with progress, shows image thumbnails, and shows the seal on the capture page', async () => {
    const { page, errors } = await studyPage(engineer);
    await page.locator('[data-testid="drop-zone"]').scrollIntoViewIfNeeded();
    // A real drop: a DataTransfer holding a PNG made by a canvas in the page.
    // (A string, not a function: the Node project's types have no DOM.)
    await page.evaluate(`(async () => {
      const canvas = document.createElement('canvas');
      canvas.width = 64;
      canvas.height = 48;
      const g = canvas.getContext('2d');
      g.fillStyle = '#2d6e4f';
      g.fillRect(0, 0, 64, 48);
      g.fillStyle = '#c8a24a';
      g.fillRect(20, 14, 24, 20);
      const blob = await new Promise((resolve) => canvas.toBlob((b) => resolve(b), 'image/png'));
      const dt = new DataTransfer();
      dt.items.add(new File([blob], 'board-top.png', { type: 'image/png' }));
      const zone = document.querySelector('[data-testid="drop-zone"]');
      zone.dispatchEvent(new DragEvent('dragenter', { dataTransfer: dt, bubbles: true, cancelable: true }));
      zone.dispatchEvent(new DragEvent('drop', { dataTransfer: dt, bubbles: true, cancelable: true }));
    })()`);
    await page
      .locator('[data-testid="attachments"] img[alt="Thumbnail of board-top.png"]')
      .waitFor();
    expect(await page.locator('[data-testid="attachments"]').innerText()).toContain(
      'Emil Engineer',
    );
    // A printout for the baseline checkpoint, chosen as the target, through the file picker.
    await page.locator('[data-testid="attach-target"]').click();
    await page
      .locator('.el-select-dropdown__item:visible', { hasText: 'Checkpoint: Baseline' })
      .click();
    await page.locator('[data-section="attachments"] input[type="file"]').setInputFiles({
      name: 'baseline-printout.csv',
      mimeType: 'text/csv',
      buffer: Buffer.from('seq,value\n0,32768.0001\n'),
    });
    await page.locator('[data-testid="attachments"] >> text=baseline-printout.csv').waitFor();
    expect(await page.locator('[data-testid="attachments"]').innerText()).toContain(
      'Checkpoint: Baseline',
    );
    await page
      .locator('[data-section="attachments"]')
      .screenshot({ path: path.join(RESULTS, 'attachments.png') });
    expect(errors).toEqual([]);
    await page.context().close();

    const captures = await apiAs(server.url, 'viewer').then((v) =>
      v.call<{ captures: Array<{ id: number }> }>('GET', '/api/captures?studyId=1'),
    );
    const c = await openAs(engineer);
    await c.page.goto(`${server.url}/captures/${captures.captures[0].id}`);
    await c.page.locator('[data-testid="seal"][data-state="ok"]').waitFor();
    expect(await c.page.locator('[data-testid="seal"]').innerText()).toMatch(
      /Sealed ✓\s+SHA-256 [0-9a-f]{64}/,
    );
    // A file chosen with the picker goes to the capture.
    await c.page.locator('[data-section="attachments"] input[type="file"]').setInputFiles({
      name: 'counter-printout.pdf',
      mimeType: 'application/pdf',
      buffer: Buffer.from('%PDF-1.4\n1 0 obj << >> endobj\ntrailer << >>\n%%EOF\n'),
    });
    await c.page.locator('[data-testid="attachments"] >> text=counter-printout.pdf').waitFor();
    await c.page.screenshot({ path: path.join(RESULTS, 'capture-seal.png'), fullPage: true });
    expect(c.errors).toEqual([]);
    await c.page.context().close();
  });

  it('lets the engineer submit the running study with a note', async () => {
    const { page, errors } = await studyPage(engineer);
    expect(await statusTag(page)).toBe('Running');
    expect(
      await page.locator('[data-section="review"] button[data-action="approve"]').count(),
    ).toBe(0);
    await reviewStep(page, 'submit', {
      text: 'Three checkpoints of Y3 measured; the over-exposure shows.',
    });
    await expect.poll(() => statusTag(page)).toBe('In review');
    // Locked: planning and capture controls are gone.
    expect(await page.locator('button:has-text("Add checkpoint")').count()).toBe(0);
    expect(await page.locator('button:has-text("Capture on the bench")').count()).toBe(0);
    expect(await page.locator('[data-testid="drop-zone"]').count()).toBe(0);
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('lets the lead return it with a comment, which the engineer then reads', async () => {
    const { page, errors } = await studyPage(lead);
    expect(await statusTag(page)).toBe('In review');
    // The comment is required: an empty return is refused in the dialog.
    await page.click('[data-section="review"] button[data-action="return"]');
    const dialog = page.locator('.el-dialog:visible');
    await dialog.locator('button[data-action="confirm-review"]').click();
    await dialog.locator('text=Say what must change').waitFor();
    await page.screenshot({ path: path.join(RESULTS, 'review-return-dialog.png') });
    await dialog
      .locator('textarea[name="text"]')
      .fill('Record the bake checkpoint for Y3 before sign-off.');
    await dialog.locator('button[data-action="confirm-review"]').click();
    await dialog.waitFor({ state: 'hidden' });
    await expect.poll(() => statusTag(page)).toBe('Returned');
    expect(errors).toEqual([]);
    await page.context().close();

    const e = await studyPage(engineer);
    expect(await e.page.locator('[data-testid="return-comment"]').innerText()).toContain(
      'Record the bake checkpoint for Y3 before sign-off.',
    );
    expect(await e.page.locator('button:has-text("Add checkpoint")').count()).toBe(1);
    await e.page
      .locator('[data-section="review"]')
      .screenshot({ path: path.join(RESULTS, 'review-returned.png') });
    await e.page.context().close();
  });

  it('prints the returned study with a "not approved" watermark on every page and page numbers', async () => {
    const out = await printReport(engineer, 'report-returned');
    expect(out.text).toContain(TITLE);
    expect(out.text).toMatch(/NOT\s+APPROVED/);
    expect(out.pages).toBeGreaterThan(1);
    expect(out.text).toContain(`Page 1 of ${out.pages}`);
    // The watermark is on every page (first page counted twice: once alone, once in the whole text).
    expect((out.text.match(/NOT\s+APPROVED/g) ?? []).length).toBeGreaterThanOrEqual(out.pages + 1);
  });

  it('lets the engineer resubmit and the lead approve with the password', async () => {
    const e = await studyPage(engineer);
    await reviewStep(e.page, 'submit', {
      text: 'Bake is scheduled for next week; approve the wash result now.',
    });
    await expect.poll(() => statusTag(e.page)).toBe('In review');
    await e.page.context().close();

    const w = await openPage(browser, {
      viewport: { width: 1360, height: 900 },
      session: lead,
      ignoreErrors: [/status of 403/],
    });
    const { page, errors } = w;
    await page.goto(`${server.url}/studies/1`);
    await page.waitForSelector('[data-section="review"] [data-testid="review-history"]');
    // A wrong password is refused and says so.
    await page.click('[data-section="review"] button[data-action="approve"]');
    const dialog = page.locator('.el-dialog:visible');
    await dialog.locator('input[name="password"]').fill('not-my-password');
    await dialog.locator('button[data-action="confirm-review"]').click();
    await dialog.locator('text=The password does not match').waitFor();
    await dialog.locator('input[name="password"]').fill(DEMO_PASSWORD);
    await dialog
      .locator('textarea[name="text"]')
      .fill('Wash qualified; over-exposure limit noted.');
    await page.screenshot({ path: path.join(RESULTS, 'review-approve-dialog.png') });
    await dialog.locator('button[data-action="confirm-review"]').click();
    await dialog.waitFor({ state: 'hidden' });
    await expect.poll(() => statusTag(page)).toBe('Approved');

    const history = page.locator('[data-testid="review-history"] li');
    await expect.poll(() => history.count()).toBe(4);
    const steps = await history.evaluateAll((els) =>
      els.map((el) => el.getAttribute('data-action')),
    );
    expect(steps).toEqual(['approve', 'submit', 'return', 'submit']);
    expect(await history.nth(0).innerText()).toContain('Lena Lead');
    expect(await history.nth(2).innerText()).toContain('Record the bake checkpoint');
    expect(
      await page.locator('[data-section="review"] button[data-action="reopen"]').isVisible(),
    ).toBe(true);
    await page.locator('[data-testid="audit-trail"]').waitFor();
    expect(await page.locator('[data-testid="audit-trail"]').innerText()).toContain(
      'study.approve',
    );
    await page.screenshot({ path: path.join(RESULTS, 'review-approved.png'), fullPage: true });
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('prints the approved report with the title, the seals, the history and no watermark', async () => {
    const out = await printReport(lead, 'report-approved');
    expect(out.text).toContain(TITLE);
    expect(out.text).not.toMatch(/NOT\s+APPROVED/);
    expect(out.text).toContain('Approved for revision 1 by');
    expect(out.text).toContain('Decision rule');
    expect(out.text).toContain('Seals of the captures used');
    const captures = await apiAs(server.url, 'viewer').then((v) =>
      v.call<{ captures: Array<{ id: number }> }>('GET', '/api/captures?studyId=1'),
    );
    const seal = await apiAs(server.url, 'viewer').then((v) =>
      v.call<{ sha256: string }>('GET', `/api/captures/${captures.captures[0].id}/seal`),
    );
    expect(out.text.replace(/\s+/g, '')).toContain(seal.sha256);
    expect(out.text).toContain(`Page ${out.pages} of ${out.pages}`);
    // The approved revision is kept as it was approved.
    const again = await printReport(lead, 'report-revision-1', '?revision=1');
    expect(again.text).toContain('Approved for revision 1 by');
  });

  it('prints on Letter paper when Letter is chosen, A4 otherwise', async () => {
    const { page, errors } = await openAs(lead);
    await page.goto(`${server.url}/studies/1/report`);
    await page.waitForSelector('[data-testid="report"]');
    const sizeOf = async (name: string) => {
      const file = path.join(RESULTS, `${name}.pdf`);
      writeFileSync(file, await page.pdf({ preferCSSPageSize: true, printBackground: true }));
      const m = /Page size:\s+([\d.]+) x ([\d.]+) pts/.exec(
        execFileSync('pdfinfo', [file]).toString('utf8'),
      );
      return [Number(m?.[1]), Number(m?.[2])];
    };
    // A4 is 595.28 × 841.89 pt and Letter 612 × 792 pt (ISO 216; ANSI letter, 8.5 × 11 in);
    // Chromium rounds page sizes to its pixel grid, so within 1 pt.
    const [aw, ah] = await sizeOf('report-a4');
    expect(Math.abs(aw - 595.28)).toBeLessThan(1);
    expect(Math.abs(ah - 841.89)).toBeLessThan(1);
    await page.locator('label:has-text("Letter")').click();
    const [lw, lh] = await sizeOf('report-letter');
    expect(Math.abs(lw - 612)).toBeLessThan(1);
    expect(Math.abs(lh - 792)).toBeLessThan(1);
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('shows the admin the e-mails on the Outbox page', async () => {
    // The worker delivers through the local mail service in the server process.
    await server.server.mailWorker!.deliverDue();
    const { page, errors } = await openAs(admin);
    await page.goto(`${server.url}/outbox`);
    await page.waitForSelector('[data-testid="outbox"]');
    const text = await page.locator('[data-testid="outbox"]').innerText();
    expect(text).toContain(`lead@${DEMO_DOMAIN}`);
    expect(text).toContain('was approved');
    expect(text).toContain('was returned');
    await page.screenshot({ path: path.join(RESULTS, 'outbox.png'), fullPage: true });
    await page.click('text=Received by the local mail service');
    await page.waitForSelector('[data-testid="received"]');
    expect(await page.locator('[data-testid="received"]').innerText()).toContain(
      'Record the bake checkpoint for Y3 before sign-off.',
    );
    await page.click('button[data-action="verify"]');
    await page.locator('text=Intact:').waitFor();
    expect(errors).toEqual([]);
    await page.context().close();
  });
  it('shows a red integrity warning on the capture page, the matrix and the captures list once a sealed reading changes in SQL', async () => {
    const captures = await apiAs(server.url, 'viewer').then((v) =>
      v.call<{ captures: Array<{ id: number; dutId: number }> }>('GET', '/api/captures?studyId=1'),
    );
    const id = captures.captures[0].id;
    await server.server.db.pool.query(
      'UPDATE readings SET value = value * (1 + 1e-9) WHERE capture_id = $1 AND seq = 10',
      [id],
    );
    const { page, errors } = await openAs(lead);
    await page.goto(`${server.url}/captures/${id}`);
    await page.locator('[data-testid="seal"][data-state="broken"]').waitFor();
    expect(await page.locator('[data-testid="seal"] [role="alert"]').innerText()).toContain(
      'Integrity warning',
    );
    await page
      .locator('[data-section="seal"]')
      .screenshot({ path: path.join(RESULTS, 'seal-broken.png') });
    await page.goto(`${server.url}/studies/1`);
    await page.locator('[data-testid="cell-seal-broken"]').first().waitFor();
    await page.goto(`${server.url}/captures`);
    await page.locator('.captures__seal-broken').first().waitFor();
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
