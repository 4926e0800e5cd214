import http from 'node:http';
import type { AddressInfo } from 'node:net';
import { launchChromium, openPage } from '../helpers/browser.js';
import { pendingStoreScript } from '../helpers/pendingStoreBundle.js';
import { recordFigure } from './summary.js';

// Issue 15, the uploader's pending store in IndexedDB (src/api/indexedDbStore.ts), in Chromium:
// time per 1,000 readings handed over as the bench does at 1,000 readings/s (a handover every
// 20 ms, so 20 readings a put), then taken in uploader batches and cleared once acknowledged —
// the store of version 1 (one record per reading, reproduced below as it was) against the chunked
// store of version 2 (the module itself). Printed, never asserted.

const READINGS = 20_000;
const HANDOVER = 20;
const BATCH = 2_000;

/** Version 1 of the store, as it was before chunks (one record per reading), for the "before" line. */
const PER_READING_STORE = `
window.PerReadingStore = class {
  constructor(name) {
    const open = indexedDB.open(name, 1);
    open.onupgradeneeded = () => open.result.createObjectStore('readings', { keyPath: ['captureId', 'seq'] });
    this.db = new Promise((res, rej) => { open.onsuccess = () => res(open.result); open.onerror = () => rej(open.error); });
  }
  static done(tx) { return new Promise((res, rej) => { tx.oncomplete = res; tx.onerror = () => rej(tx.error); }); }
  async put(captureId, readings) {
    const tx = (await this.db).transaction('readings', 'readwrite');
    const s = tx.objectStore('readings');
    for (const r of readings) s.put({ captureId, seq: r.seq, t: r.t, value: r.value, flags: r.flags ?? 0 });
    await PerReadingStore.done(tx);
  }
  async take(captureId, limit, afterSeq) {
    const tx = (await this.db).transaction('readings', 'readonly');
    const keys = afterSeq === undefined
      ? IDBKeyRange.bound([captureId, 0], [captureId, Number.MAX_SAFE_INTEGER])
      : IDBKeyRange.bound([captureId, afterSeq], [captureId, Number.MAX_SAFE_INTEGER], true);
    const r = tx.objectStore('readings').getAll(keys, limit);
    return new Promise((res, rej) => { r.onsuccess = () => res(r.result); r.onerror = () => rej(r.error); });
  }
  async remove(captureId, seqs) {
    const tx = (await this.db).transaction('readings', 'readwrite');
    const sorted = [...seqs].sort((a, b) => a - b);
    tx.objectStore('readings').delete(IDBKeyRange.bound([captureId, sorted[0]], [captureId, sorted[sorted.length - 1]]));
    await PerReadingStore.done(tx);
  }
  async close() { (await this.db).close(); }
};`;

interface Timing {
  putMs: number;
  takeMs: number;
  clearMs: number;
}

export async function benchPendingStore(): Promise<void> {
  console.log('\nPending readings in IndexedDB (Chromium, headless)');
  const site = http.createServer((_req, res) => {
    res.writeHead(200, { 'content-type': 'text/html' });
    res.end('<!doctype html><title>pending store bench</title>');
  });
  await new Promise<void>((resolve) => site.listen(0, '127.0.0.1', resolve));
  const browser = await launchChromium();
  try {
    const { page } = await openPage(browser);
    await page.goto(`http://127.0.0.1:${(site.address() as AddressInfo).port}/`);
    await page.evaluate(pendingStoreScript());
    await page.evaluate(PER_READING_STORE);
    const run = (which: 'before' | 'after'): Promise<Timing> =>
      page.evaluate(`(async () => {
        const name = 'bench-${which}-' + Math.random();
        const s = ${which === 'before' ? 'new window.PerReadingStore(name)' : 'new window.DriftbenchPendingStore.IndexedDbPendingStore(name)'};
        const t0 = performance.now();
        for (let b = 0; b < ${READINGS}; b += ${HANDOVER})
          await s.put(1, Array.from({ length: ${HANDOVER} }, (_, i) => ({
            seq: b + i, t: (b + i) * 1e-3, value: 16e6 + Math.sin(b + i), flags: 0,
          })));
        const t1 = performance.now();
        let takeMs = 0;
        let clearMs = 0;
        for (;;) {
          const a = performance.now();
          const got = await s.take(1, ${BATCH});
          const b = performance.now();
          if (got.length === 0) break;
          await s.remove(1, got.map((r) => r.seq));
          takeMs += b - a;
          clearMs += performance.now() - b;
        }
        await s.close();
        indexedDB.deleteDatabase(name);
        return { putMs: t1 - t0, takeMs, clearMs };
      })()`);
    // Warm-up of both, then the measured runs.
    await run('before');
    await run('after');
    const before: Timing = await run('before');
    const after: Timing = await run('after');
    const per1000 = (ms: number) => ms / (READINGS / 1000);
    const line = (label: string, t: Timing, records: string) =>
      console.log(
        `  ${label.padEnd(30)} put ${per1000(t.putMs).toFixed(1).padStart(6)} ms, take ${per1000(t.takeMs).toFixed(1).padStart(5)} ms, clear ${per1000(t.clearMs).toFixed(1).padStart(5)} ms per 1,000 readings (${records})`,
      );
    console.log(
      `  ${READINGS.toLocaleString('en-US')} readings handed over ${HANDOVER} at a time (1,000 readings/s with a handover every 20 ms), taken and cleared in batches of ${BATCH.toLocaleString('en-US')}:`,
    );
    line(
      'one record per reading (v1)',
      before,
      `${READINGS / HANDOVER} puts of ${HANDOVER} records`,
    );
    line('one record per chunk (v2)', after, `${READINGS / HANDOVER} puts of 1 record`);
    const ratio = before.putMs / after.putMs;
    console.log(`  put time, v1 / v2: ${ratio.toFixed(1)}×`);
    recordFigure({
      figure: 'pending store: put time per 1,000 readings (v1 → v2)',
      measured: `${per1000(before.putMs).toFixed(1)} → ${per1000(after.putMs).toFixed(1)} ms`,
      target: 'fewer writes (no target)',
      met: null,
    });
  } finally {
    await browser.close();
    site.close();
  }
}
