import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, apiAs, launchChromium, openPage, type Session } from '../helpers/browser.js';

// The printed report's equipment tables in a real Chromium: an instrument whose calibration falls
// due within 30 days says so in the calibration rule's words beside its due date (as the Lab page
// does), a reference's verification reads "date · how it was verified", and a reference shows its
// calibration due date too.

let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let lead: Session;
let dueOn: string;
let verifiedBy: string;
let referenceDue: string | null;

describe('the equipment of the printed report', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    const admin = await apiAs(server.url, 'admin');
    const technician = await apiAs(server.url, 'technician');
    lead = (await apiAs(server.url, 'lead')).session;
    const { instruments } = await admin.call<{
      instruments: Array<{ id: number; kind: string }>;
    }>('GET', '/api/instruments');
    const counter = instruments.find((i) => i.kind === 'counter')!;
    // Ten days from today (UTC): "due soon" is today up to the 30th day (DEVELOPERS.md, one
    // calibration rule).
    const now = new Date();
    dueOn = new Date(Date.UTC(now.getUTCFullYear(), now.getUTCMonth(), now.getUTCDate() + 10))
      .toISOString()
      .slice(0, 10);
    await admin.call('PATCH', `/api/instruments/${counter.id}`, { calibrationDue: dueOn });
    const reference = await admin.call<{
      reference: { verifiedBy: string | null; calibrationDue: string | null };
    }>('GET', '/api/references/1');
    verifiedBy = reference.reference.verifiedBy ?? '';
    referenceDue = reference.reference.calibrationDue;
    const study = await technician.call<{
      checkpoints: Array<{ id: number; order: number }>;
      duts: Array<{ id: number; label: string; nominal: number }>;
    }>('GET', '/api/studies/1');
    const baseline = [...study.checkpoints].sort((a, b) => a.order - b.order)[0];
    const crystal = study.duts.find((d) => d.label.startsWith('Y1'))!;
    const capture = await technician.call<{ id: number }>('POST', '/api/captures', {
      dutId: crystal.id,
      checkpointId: baseline.id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      referenceId: 1,
      instrumentId: counter.id,
      ambientC: 23,
    });
    const readings = Array.from({ length: 60 }, (_, seq) => ({
      seq,
      t: seq,
      value: crystal.nominal * (1 + 1e-9 * Math.sin(seq)),
    }));
    await technician.call('POST', `/api/captures/${capture.id}/readings`, { readings });
    await technician.call('POST', `/api/captures/${capture.id}/finish`);
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('says when an instrument falls due and how a reference was verified', async () => {
    const { page, errors } = await openPage(browser, {
      viewport: { width: 1200, height: 1000 },
      session: lead,
    });
    await page.goto(`${server.url}/studies/1/report`);
    await page.waitForSelector('[data-testid="report"]');
    const section = page.locator('section', { hasText: '3. Equipment and references' });
    const counterRow = section.locator('tr', { has: page.locator(`td >> text=${dueOn}`) });
    expect((await counterRow.locator('td').last().innerText()).trim()).toBe(
      `${dueOn} · Due in 10 days`,
    );
    expect(verifiedBy).not.toBe('');
    const referenceRow = section.locator('tr', { has: page.locator(`td >> text=${verifiedBy}`) });
    const verified = (await referenceRow.locator('td').nth(4).innerText()).trim();
    expect(verified).toMatch(new RegExp(`^\\d{4}-\\d{2}-\\d{2} · ${verifiedBy}$`));
    // The demo lab's reference is due in 355 days: its due date alone (no words while valid).
    expect(referenceDue).not.toBeNull();
    expect((await referenceRow.locator('td').last().innerText()).trim()).toBe(referenceDue);
    await section.screenshot({ path: path.join(RESULTS, 'report-equipment.png') });
    expect(errors).toEqual([]);
    await page.context().close();
  });
});
