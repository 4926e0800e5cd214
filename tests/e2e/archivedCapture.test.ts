import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, apiWith, launchChromium, login, openPage } from '../helpers/browser.js';
import { archiveReadingBlock } from '../../server/services/partitions.js';

// Issue 15: a capture whose readings block was archived (its partition detached) still has a
// page: the record, the summary and the conditions show, and the parts that need the readings
// say they are archived instead of failing.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
let captureId: number;

describe('a capture whose readings are archived', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
    const technician = await login(server.url, 'technician');
    const api = apiWith(server.url, technician.token);
    const { studies } = await api<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
    const study = await api<{
      checkpoints: Array<{ id: number }>;
      duts: Array<{ id: number; label: string; nominal: number }>;
    }>('GET', `/api/studies/${studies[0].id}`);
    const dut = study.duts.find((d) => d.label.startsWith('Y1'))!;
    const capture = await api<{ id: number }>('POST', '/api/captures', {
      dutId: dut.id,
      checkpointId: study.checkpoints[0].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
    });
    captureId = capture.id;
    const readings = Array.from({ length: 600 }, (_, seq) => ({
      seq,
      t: seq,
      value: dut.nominal * (1 + 1e-9 * Math.sin(seq)),
    }));
    await api('POST', `/api/captures/${captureId}/readings`, { readings });
    await api('POST', `/api/captures/${captureId}/finish`);
    // Block 0 becomes complete (the next capture is numbered 1000) and is detached.
    await server.server.db.pool.query(`SELECT setval('captures_id_seq', 1000, false)`);
    await archiveReadingBlock(server.server.db.pool, Math.floor(captureId / 1000), {
      mode: 'detach',
      olderThanDays: 0,
      actor: 'test',
      now: new Date(Date.now() + 60_000),
    });
  }, 120_000);
  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows its record and says its readings are archived, with no server error', async () => {
    const viewer = await login(server.url, 'viewer');
    const { page, errors } = await openPage(browser, {
      session: viewer,
      // The 410 answers are expected: the browser logs every failed request as a console error.
      ignoreErrors: [/status of 410/],
    });
    const statuses: number[] = [];
    page.on('response', (r) => {
      if (r.url().includes(`/api/captures/${captureId}`)) statuses.push(r.status());
    });
    await page.goto(`${server.url}/captures/${captureId}`);
    await page.getByText('600 readings').first().waitFor();
    await page
      .getByText(/were archived on/)
      .first()
      .waitFor();
    await page.getByText('Readings archived').waitFor();
    await page.screenshot({
      path: path.join(RESULTS, 'archived-capture.png'),
      fullPage: true,
    });
    expect(statuses).toContain(410);
    expect(statuses.filter((s) => s >= 500)).toEqual([]);
    expect(errors).toEqual([]);
  });
});
