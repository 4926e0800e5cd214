// Preloaded into the bench server process (`node --import ./tests/bench/loopProbe.mjs`) when
// BENCH_LOOP_FILE is set: once a second it appends the main event loop's delay over that second
// (perf_hooks.monitorEventLoopDelay, 10 ms resolution) as one JSON line, so a bench can say how
// long the server's loop stood still during each phase.
import { monitorEventLoopDelay } from 'node:perf_hooks';
import { appendFileSync } from 'node:fs';
import { isMainThread } from 'node:worker_threads';

// Worker threads inherit --import: only the main thread's loop is measured (an analysis worker's
// loop is busy by design while it computes, and once wrote its seconds-long delays here).
const file = process.env.BENCH_LOOP_FILE;
if (file && isMainThread) {
  const h = monitorEventLoopDelay({ resolution: 10 });
  h.enable();
  const timer = setInterval(() => {
    const ms = (ns) => Math.round(ns / 1e4) / 100;
    appendFileSync(
      file,
      JSON.stringify({
        at: Date.now(),
        p50: ms(h.percentile(50)),
        p99: ms(h.percentile(99)),
        max: ms(h.max),
      }) + '\n',
    );
    h.reset();
  }, 1000);
  timer.unref();
}
