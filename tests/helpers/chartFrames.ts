import type { Page } from 'playwright-core';
import { signIn } from './browser.js';

// The bench chart at 1,000 readings/s (issue 15): a technician starts a capture of the Y1 crystal
// from the simulated counter (gate 0.1 s at 100× = 1,000 readings per wall second) and the page's
// own frame times are measured with a requestAnimationFrame loop. Shared by the Chromium test
// (tests/e2e/benchChart.test.ts, a generous bound) and `npm run bench -- chart` (the figures).

/** Frame times of the page while it captured, and how the readings on screen grew. */
export interface ChartFrameFigures {
  /** Frames seen (intervals between consecutive animation frames). */
  frames: number;
  seconds: number;
  p50: number;
  p95: number;
  max: number;
  /** Frames that took more than 50 ms (a visible stutter). */
  over50: number;
  /** Long tasks (> 50 ms on the main thread) the browser reported, and the longest (ms). */
  longTasks: number;
  longestTask: number;
  /** The bench's reading count ([data-stat="n"]) once a second while measuring. */
  readings: number[];
  /** Readings drawn in the chart's window ("N in view") once a second. */
  inView: number[];
  /** Readings the bench took per second over the measurement. */
  rate: number;
}

/** The k-th percentile (0–100) of sorted values, nearest rank (common practice, no source). */
export function percentile(sorted: readonly number[], k: number): number {
  if (sorted.length === 0) return NaN;
  const rank = Math.ceil((k / 100) * sorted.length);
  return sorted[Math.min(sorted.length, Math.max(1, rank)) - 1];
}

async function choose(page: Page, field: string, text: string): Promise<void> {
  await page.click(`[data-field="${field}"] .el-select__wrapper`);
  await page.locator('.el-select-dropdown__item:visible', { hasText: text }).first().click();
  const wrapper = page.locator(`[data-field="${field}"] .el-select__wrapper`);
  for (let i = 0; !(await wrapper.innerText()).includes(text); i++) {
    if (i > 100) throw new Error(`${field} did not take ${text}`);
    await page.waitForTimeout(100);
  }
}

async function radio(page: Page, field: string, text: string): Promise<void> {
  await page.locator(`[data-field="${field}"] .el-radio-button`, { hasText: text }).first().click();
}

async function count(page: Page, selector: string): Promise<number> {
  const text = await page.locator(selector).innerText();
  return Number(text.split(' in view')[0].replace(/\D/g, ''));
}

/**
 * Signs in as the technician and starts a capture of the Y1 crystal at 1,000 readings/s on the
 * bench; returns once readings are arriving.
 */
export async function startFastCapture(page: Page, baseUrl: string): Promise<void> {
  await signIn(page, baseUrl, 'technician', '/bench');
  await page.waitForSelector('[data-testid="start-capture"]');
  await choose(page, 'study', 'Aqueous ultrasonic wash');
  await choose(page, 'checkpoint', 'Baseline');
  await choose(page, 'dut', 'Y1 16 MHz crystal');
  await choose(page, 'instrument', 'Counter C-1');
  await choose(page, 'reference', 'GPS');
  await radio(page, 'link-kind', 'Simulator');
  await radio(page, 'acceleration', '100×');
  await radio(page, 'mode', 'Talk-only');
  await page.fill('[data-field="gate"] input', '0.1');
  await page.press('[data-field="gate"] input', 'Tab');
  await radio(page, 'target', 'I stop it');
  await page.fill('[data-field="ambient"] input', '23.0');
  await page.press('[data-field="ambient"] input', 'Tab');
  await page.click('[data-testid="start-capture"]');
  await page.waitForSelector('.live-chart canvas');
  const started = Date.now();
  while ((await count(page, '[data-stat="n"]')) < 500) {
    if (Date.now() - started > 20_000) throw new Error('no readings reached the bench in 20 s');
    await page.waitForTimeout(250);
  }
}

/** What the probe keeps on the page's global object. */
interface Probe {
  requestAnimationFrame(cb: (now: number) => void): number;
  PerformanceObserver: typeof PerformanceObserver;
  __dbFrames?: number[];
  __dbTasks?: number[];
  __dbStop?: boolean;
  __dbLast?: number;
  __dbLoop?: (now: number) => void;
}

/**
 * Measures the page's frame times for `seconds` while it records: a requestAnimationFrame loop
 * notes the interval between frames, a PerformanceObserver the long tasks; the reading count and
 * the chart's "in view" count are read once a second.
 */
export async function measureChartFrames(page: Page, seconds: number): Promise<ChartFrameFigures> {
  // A function, not a string: the page's CSP refuses string evaluation.
  await page.evaluate(() => {
    const g = globalThis as unknown as Probe;
    g.__dbFrames = [];
    g.__dbTasks = [];
    g.__dbStop = false;
    try {
      new g.PerformanceObserver((list) => {
        for (const e of list.getEntries()) g.__dbTasks!.push(e.duration);
      }).observe({ type: 'longtask' } as never);
    } catch {
      // no long-task timing in this browser: the frame times still tell
    }
    // Kept on the global object, not in a const: tsx (the bench) would wrap a named const in a
    // helper the page does not have.
    g.__dbLast = -1;
    g.__dbLoop = (now: number) => {
      if (g.__dbLast! >= 0) g.__dbFrames!.push(now - g.__dbLast!);
      g.__dbLast = now;
      if (!g.__dbStop) g.requestAnimationFrame(g.__dbLoop!);
    };
    g.requestAnimationFrame(g.__dbLoop);
  });
  const readings: number[] = [];
  const inView: number[] = [];
  const at: number[] = [];
  const t0 = Date.now();
  for (let s = 0; s < seconds; s++) {
    await page.waitForTimeout(1000);
    at.push(Date.now());
    readings.push(await count(page, '[data-stat="n"]'));
    inView.push(await count(page, '[data-testid="chart-shown"]'));
  }
  const wall = (Date.now() - t0) / 1000;
  const span = (at[at.length - 1] - at[0]) / 1000;
  const { frames, tasks } = await page.evaluate(() => {
    const g = globalThis as unknown as Probe;
    g.__dbStop = true;
    return { frames: g.__dbFrames ?? [], tasks: g.__dbTasks ?? [] };
  });
  const sorted = [...frames].sort((a, b) => a - b);
  return {
    frames: frames.length,
    seconds: wall,
    p50: percentile(sorted, 50),
    p95: percentile(sorted, 95),
    max: sorted.length ? sorted[sorted.length - 1] : NaN,
    over50: frames.filter((f) => f > 50).length,
    longTasks: tasks.length,
    longestTask: tasks.length ? Math.max(...tasks) : 0,
    readings,
    inView,
    rate: span > 0 ? (readings[readings.length - 1] - readings[0]) / span : NaN,
  };
}

/** One line of figures for a log. */
export function describeFrames(f: ChartFrameFigures): string {
  const ms = (x: number) => `${x.toFixed(1)} ms`;
  return (
    `${f.frames} frames in ${f.seconds.toFixed(1)} s at ${Math.round(f.rate)} readings/s: ` +
    `p50 ${ms(f.p50)}, p95 ${ms(f.p95)}, max ${ms(f.max)}, ${f.over50} over 50 ms; ` +
    `${f.longTasks} long tasks (longest ${ms(f.longestTask)})`
  );
}
