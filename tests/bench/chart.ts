import { readFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { buildClientIfStale } from '../../scripts/build-client.js';
import { PROJECT_ROOT } from '../../server/index.js';
import { launchChromium, openPage } from '../helpers/browser.js';
import { describeFrames, measureChartFrames, startFastCapture } from '../helpers/chartFrames.js';
import { startBenchServer } from './server.js';
import { recordFigure } from './summary.js';

// The bench chart at 1,000 readings/s (issue 15), the same measurement as the Chromium test
// (tests/e2e/benchChart.test.ts) with the strict target beside it: at 60 Hz a frame is 16.7 ms,
// and p95 ≤ 33 ms (two frames) is the least that still looks smooth. Printed, never asserted.
// `CHART_PROFILE=1` also prints where the page's main thread spent its time (a CPU profile of
// the built client, by chunk and position, with the code found there).

interface ProfileNode {
  id: number;
  callFrame: { functionName: string; url: string; lineNumber: number; columnNumber: number };
}

function summariseProfile(profile: {
  nodes: ProfileNode[];
  samples: number[];
  timeDeltas: number[];
}): string[] {
  const byId = new Map(profile.nodes.map((n) => [n.id, n]));
  const self = new Map<string, number>();
  let total = 0;
  profile.samples.forEach((id, i) => {
    const f = byId.get(id)!.callFrame;
    const file = f.url ? path.basename(f.url) : '';
    const key = `${f.functionName || '(anonymous)'} ${file}:${f.lineNumber + 1}:${f.columnNumber + 1}`;
    const dt = profile.timeDeltas[i] / 1000;
    total += dt;
    self.set(key, (self.get(key) ?? 0) + dt);
  });
  const lines = [...self]
    .sort((a, b) => b[1] - a[1])
    .slice(0, 25)
    .map(([key, ms]) => {
      const m = /(\S+\.js):(\d+):(\d+)$/.exec(key);
      let code = '';
      if (m) {
        try {
          const src = readFileSync(path.join(PROJECT_ROOT, 'dist/assets', m[1]), 'utf8').split(
            '\n',
          )[Number(m[2]) - 1];
          code = src.slice(Number(m[3]) - 1, Number(m[3]) + 70).replace(/\s+/g, ' ');
        } catch {
          // not a file of the build
        }
      }
      return `    ${ms.toFixed(0).padStart(6)} ms ${((100 * ms) / total).toFixed(1).padStart(5)} %  ${key}  ${code}`;
    });
  return [`    ${total.toFixed(0)} ms sampled`, ...lines];
}

export async function benchChart(): Promise<void> {
  console.log('\nBench chart at 1,000 readings/s (Chromium, headless)');
  const TWO_FRAMES_MS = 2000 / 60;
  buildClientIfStale(PROJECT_ROOT, (line) => console.log(`  ${line}`));
  const server = await startBenchServer({ env: { DRIFTBENCH_SIMULATORS: '1' } });
  const browser = await launchChromium();
  try {
    const { page, errors } = await openPage(browser, { viewport: { width: 1440, height: 940 } });
    await startFastCapture(page, server.base);
    const profiling = process.env.CHART_PROFILE === '1';
    const cdp = profiling ? await page.context().newCDPSession(page) : null;
    if (cdp) {
      await cdp.send('Profiler.enable');
      await cdp.send('Profiler.start');
    }
    const f = await measureChartFrames(page, 10);
    const ms = (x: number) => `${x.toFixed(1)} ms`.padStart(9);
    console.log(`  ${describeFrames(f)}; load ${os.loadavg()[0].toFixed(2)}`);
    console.log(`  frame time p50                 ${ms(f.p50)}   target ≤ 16.7 ms (60 Hz)`);
    console.log(`  frame time p95                 ${ms(f.p95)}   target ≤ 33.3 ms (two frames)`);
    console.log(`  frame time max                 ${ms(f.max)}`);
    recordFigure({
      figure: 'bench chart at 1,000 readings/s: frame time p95',
      measured: `${f.p95.toFixed(1)} ms (p50 ${f.p50.toFixed(1)} ms)`,
      target: '≤ 33.3 ms',
      // Frame intervals come in whole 60 Hz periods with a fraction of a millisecond of timer
      // jitter, so a p95 of two periods (33.33 ms, printed 33.3 or 33.4) is the target met.
      met: f.p95 <= TWO_FRAMES_MS + 0.5,
    });
    console.log(`  frames over 50 ms          ${String(f.over50).padStart(9)}   of ${f.frames}`);
    console.log(
      `  long tasks (> 50 ms)       ${String(f.longTasks).padStart(9)}   longest ${ms(f.longestTask).trim()}`,
    );
    if (cdp) {
      const { profile } = await cdp.send('Profiler.stop');
      console.log('  where the main thread went (self time, top 25):');
      for (const line of summariseProfile(profile as never)) console.log(line);
    }
    await page.click('[data-testid="stop-capture"]');
    await page.waitForSelector('[data-testid="open-capture"]', { timeout: 60_000 });
    if (errors.length) console.log(`  page errors: ${errors.join(' | ')}`);
  } finally {
    await browser.close();
    await server.stop();
  }
}
