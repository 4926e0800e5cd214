import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { startTestServer } from '../helpers/appServer.js';
import { RESULTS, apiAs, launchChromium, openPage, signIn } from '../helpers/browser.js';
import { pendingStoreScript } from '../helpers/pendingStoreBundle.js';

// Issue 15, the uploader's pending readings in IndexedDB one record per chunk, in a real Chromium:
// the store's contract (lowest seq first, take after a seq, clears of whole and partial chunks,
// idempotent clears, a resend merged), readings that come back after a reload and are uploaded by
// the bench page, and a browser holding per-reading records of the previous version (IndexedDB
// version 1) whose readings are converted to chunks and uploaded.
let server: Awaited<ReturnType<typeof startTestServer>>;
let browser: Browser;
const SCRIPT = pendingStoreScript();

async function newCapture(): Promise<number> {
  const { call: tech } = await apiAs(server.url, 'technician');
  const studies = await tech<{ studies: Array<{ id: number }> }>('GET', '/api/studies');
  const study = await tech<{
    checkpoints: Array<{ id: number }>;
    duts: Array<{ id: number; label: string }>;
  }>('GET', `/api/studies/${studies.studies[0].id}`);
  const capture = await tech<{ id: number }>('POST', '/api/captures', {
    dutId: study.duts[0].id,
    checkpointId: study.checkpoints[0].id,
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
    ambientC: 23,
  });
  return capture.id;
}

async function stored(captureId: number): Promise<{ n: number; min: number; max: number }> {
  const { rows } = await server.server.db.pool.query<{ n: number; min: number; max: number }>(
    'SELECT count(*)::int AS n, COALESCE(min(seq), -1)::int AS min, COALESCE(max(seq), -1)::int AS max FROM readings WHERE capture_id = $1',
    [captureId],
  );
  return rows[0];
}

/** The raw IndexedDB as the page sees it: version, stores, and readings per chunk record. */
async function rawDb(page: Page): Promise<{ version: number; stores: string[]; sizes: number[] }> {
  return page.evaluate(`(async () => {
    const ask = (r) => new Promise((resolve, reject) => {
      r.onsuccess = () => resolve(r.result);
      r.onerror = () => reject(r.error);
    });
    const db = await ask(indexedDB.open('driftbench-pending'));
    const stores = [...db.objectStoreNames];
    const sizes = stores.includes('chunks')
      ? (await ask(db.transaction('chunks').objectStore('chunks').getAll())).map((c) => c.seq.length)
      : [];
    const version = db.version;
    db.close();
    return { version, stores, sizes };
  })()`);
}

/** Runs `body` in the page with `s`, a new IndexedDbPendingStore, and `cid`; returns its result. */
async function withStore<T>(page: Page, cid: number, body: string): Promise<T> {
  return page.evaluate(`(async () => {
    const s = new window.DriftbenchPendingStore.IndexedDbPendingStore();
    const cid = ${cid};
    try {
      ${body}
    } finally {
      await s.close();
    }
  })()`) as Promise<T>;
}

type Reading = { seq: number; t: number; value: number; flags: number };

describe('pending readings in IndexedDB, one record per chunk', () => {
  beforeAll(async () => {
    server = await startTestServer();
    browser = await launchChromium();
  });
  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('keeps the store contract, survives a reload, and the bench page uploads what it kept', async () => {
    const id = await newCapture();
    const { page, errors } = await openPage(browser);
    // A page of the app's origin that runs none of the app (so nothing else opens the store).
    await page.goto(`${server.url}/api/health`);
    await page.evaluate(SCRIPT);
    const first = await withStore<{
      lowest: Reading[];
      after850: Reading[];
      across: Reading[];
      afterClear: number;
      afterSecondClear: number;
      resent: Reading[];
      gapped: Reading[];
      count: number;
      captures: number[];
    }>(
      page,
      id,
      `
      const reading = (seq) => ({ seq, t: seq * 0.5, value: 16e6 + seq * 1e-3 });
      // Ten handovers of 100 readings, the last two handed over out of order.
      for (const b of [0, 1, 2, 3, 4, 5, 6, 7, 9, 8])
        await s.put(cid, Array.from({ length: 100 }, (_, i) => reading(b * 100 + i)));
      const lowest = await s.take(cid, 3);
      const after850 = await s.take(cid, 4, 850);
      const across = await s.take(cid, 250, 95); // crosses four chunks
      // Acknowledged: one whole chunk (0–99) and half of the next (100–149); then the same again.
      const acked = Array.from({ length: 150 }, (_, i) => i);
      await s.remove(cid, acked);
      const afterClear = await s.count(cid);
      await s.remove(cid, acked);
      const afterSecondClear = await s.count(cid);
      // A resend of 495–504 with new values (two chunks reached into): merged, nothing doubled.
      await s.put(cid, Array.from({ length: 10 }, (_, i) => ({ ...reading(495 + i), value: 1, flags: 2 })));
      const resent = await s.take(cid, 12, 492);
      // Acknowledged out of a run (990 and 992 only): read, rewritten, then stored again.
      await s.remove(cid, [992, 990]);
      const gapped = await s.take(cid, 5, 988);
      await s.put(cid, [reading(990), reading(992)]);
      const count = await s.count(cid);
      const captures = await s.captures();
      return { lowest, after850, across, afterClear, afterSecondClear, resent, gapped, count, captures };
      `,
    );
    // Expected values: what this test put (seq·0.5 s, 16 MHz + seq mHz, flags 0 unless set).
    expect(first.lowest).toEqual([
      { seq: 0, t: 0, value: 16e6, flags: 0 },
      { seq: 1, t: 0.5, value: 16e6 + 1e-3, flags: 0 },
      { seq: 2, t: 1, value: 16e6 + 2e-3, flags: 0 },
    ]);
    expect(first.after850.map((r) => r.seq)).toEqual([851, 852, 853, 854]);
    expect(first.across.map((r) => r.seq)).toEqual(Array.from({ length: 250 }, (_, i) => 96 + i));
    expect(first.afterClear).toBe(850);
    expect(first.afterSecondClear).toBe(850);
    expect(first.resent.map((r) => r.seq)).toEqual(Array.from({ length: 12 }, (_, i) => 493 + i));
    expect(first.resent[1]).toEqual({ seq: 494, t: 247, value: 16e6 + 494 * 1e-3, flags: 0 });
    expect(first.resent[2]).toEqual({ seq: 495, t: 247.5, value: 1, flags: 2 });
    expect(first.gapped.map((r) => r.seq)).toEqual([989, 991, 993, 994, 995]);
    expect(first.count).toBe(850);
    expect(first.captures).toEqual([id]);
    // One record per chunk: 150–199 rewritten, 400–599 merged by the resend, the rest whole.
    const raw = await rawDb(page);
    expect(raw.version).toBe(2);
    expect(raw.stores).toEqual(['chunks']);
    expect(raw.sizes.reduce((a, b) => a + b, 0)).toBe(850);
    expect([...raw.sizes].sort((a, b) => a - b)).toEqual([50, 100, 100, 100, 100, 100, 100, 200]);

    // After a reload a new store finds the same readings, lowest first.
    await page.reload();
    await page.evaluate(SCRIPT);
    const back = await withStore<{ seqs: number[]; at495: Reading }>(
      page,
      id,
      `
      const all = await s.take(cid, 10000);
      return { seqs: all.map((r) => r.seq), at495: all.find((r) => r.seq === 495) };
      `,
    );
    expect(back.seqs).toEqual(Array.from({ length: 850 }, (_, i) => 150 + i));
    expect(back.at495).toEqual({ seq: 495, t: 247.5, value: 1, flags: 2 });

    // The bench page sends what an earlier session left, and the store empties.
    await signIn(page, server.url, 'technician', '/bench');
    await page.waitForURL(/\/bench/);
    await expect
      .poll(() => stored(id), { timeout: 20_000 })
      .toEqual({ n: 850, min: 150, max: 999 });
    await expect.poll(async () => (await rawDb(page)).sizes.length, { timeout: 10_000 }).toBe(0);
    expect(errors).toEqual([]);
    await page.context().close();
  });

  it('converts a previous version’s per-reading records to chunks and uploads them', async () => {
    const id = await newCapture();
    const { page, errors } = await openPage(browser, {
      // The uploads refused below on purpose show as failed requests in the console.
      ignoreErrors: [/Failed to load resource/],
    });
    await page.goto(`${server.url}/api/health`);
    // The shape version 1 of the store wrote: one record per reading, keyed (captureId, seq).
    await page.evaluate(`(async () => {
      const db = await new Promise((resolve, reject) => {
        const r = indexedDB.open('driftbench-pending', 1);
        r.onupgradeneeded = () =>
          r.result.createObjectStore('readings', { keyPath: ['captureId', 'seq'] });
        r.onsuccess = () => resolve(r.result);
        r.onerror = () => reject(r.error);
      });
      const tx = db.transaction('readings', 'readwrite');
      for (let seq = 0; seq < 2500; seq++)
        tx.objectStore('readings').put({ captureId: ${id}, seq, t: seq, value: 16e6, flags: 0 });
      await new Promise((resolve, reject) => {
        tx.oncomplete = resolve;
        tx.onerror = () => reject(tx.error);
      });
      db.close();
    })()`);
    expect(await rawDb(page)).toEqual({ version: 1, stores: ['readings'], sizes: [] });

    // The bench opens the store (version 2) while the server is unreachable for readings: the
    // old records are converted, and kept.
    await page.route('**/api/captures/*/readings', (route) => route.abort());
    await signIn(page, server.url, 'technician', '/bench');
    await page.waitForURL(/\/bench/);
    await expect.poll(async () => (await rawDb(page)).version, { timeout: 10_000 }).toBe(2);
    const converted = await rawDb(page);
    expect(converted.stores).toEqual(['chunks']);
    // 2,500 readings in chunks of at most 1,000 (the conversion's chunk size).
    expect(converted.sizes).toEqual([1000, 1000, 500]);
    expect((await stored(id)).n).toBe(0);

    // With the server reachable again, a reload sends them all.
    await page.unroute('**/api/captures/*/readings');
    await page.reload();
    await expect
      .poll(() => stored(id), { timeout: 20_000 })
      .toEqual({ n: 2_500, min: 0, max: 2_499 });
    await expect.poll(async () => (await rawDb(page)).sizes.length, { timeout: 10_000 }).toBe(0);
    await page.screenshot({ path: path.join(RESULTS, 'pending-store-upgraded.png') });
    expect(errors.filter((e) => !/ERR_FAILED|net::/.test(e))).toEqual([]);
    await page.context().close();
  });
});
