import path from 'node:path';
import os from 'node:os';
import { mkdtempSync, readFileSync } from 'node:fs';
import pg from 'pg';
import { PROJECT_ROOT } from '../../server/index.js';
import { startBenchServer, type BenchServer } from './server.js';
import { recordFigure } from './summary.js';

// Issue 15: the finish of a large capture, and what it costs the rest of the lab meanwhile. For
// each size, a capture's readings are written straight into the table (the ingest has benches of
// its own), then `POST /api/captures/:id/finish` is timed while a client asks `GET /api/health`
// every 50 ms. Printed: the finish's wall time, the server's event-loop delay during it
// (tests/bench/loopProbe.mjs, 1 s windows) and the slowest health answer.
// `BENCH_FINISH_SIZES=1000000,3000000` chooses the sizes; BENCH_SKIP_10M=1 leaves 10 M out.
const pct = (xs: number[], p: number) =>
  [...xs].sort((a, b) => a - b)[Math.min(xs.length - 1, Math.floor(xs.length * p))] ?? NaN;
const f = (n: number) => n.toLocaleString('en-US');

/** Event-loop delay of a finish: the target is that no step holds the loop (common practice, no source). */
const LOOP_MAX_TARGET_MS = 100;

export async function benchFinishLoad(): Promise<void> {
  const sizes = process.env.BENCH_FINISH_SIZES
    ? process.env.BENCH_FINISH_SIZES.split(',').map(Number)
    : [1_000_000, ...(process.env.BENCH_SKIP_10M === '1' ? [] : [10_000_000])];
  let bench: BenchServer | undefined;
  try {
    const loopFile = path.join(
      mkdtempSync(path.join(os.tmpdir(), 'driftbench-loop-')),
      'loop.jsonl',
    );
    bench = await startBenchServer({ env: { BENCH_LOOP_FILE: loopFile } });
    const loopBetween = (from: number, to: number) => {
      const lines = readFileSync(loopFile, 'utf8')
        .trim()
        .split('\n')
        .map((l) => JSON.parse(l) as { at: number; p99: number; max: number });
      // A line covers the second before its `at`: keep those that overlap [from, to + 1 s].
      const inside = lines.filter((l) => l.at > from && l.at <= to + 1000);
      return {
        p99: pct(
          inside.map((l) => l.p99),
          0.95,
        ),
        max: Math.max(...inside.map((l) => l.max)),
      };
    };
    const headers = await bench.headers('technician');
    console.log(
      '\nFinish of a large capture (issue 15): wall time, and the server while it runs (health asked every 50 ms)',
    );
    for (const n of sizes) {
      const id = await bench.newCapture({ gateTime: 0.01 });
      const pool = new pg.Pool({ connectionString: bench.url, max: 1 });
      await pool.query(
        `INSERT INTO readings (capture_id, seq, t, value) SELECT $1, g, g * 0.01, 16e6 + sin(g / 1000.0) * 1e-3 + random() * 1e-5 FROM generate_series(0, ${n - 1}) g`,
        [id],
      );
      await pool.query(
        `UPDATE captures SET reading_count = ${n}, highest_seq = ${n - 1} WHERE id = $1`,
        [id],
      );
      await pool.query('VACUUM ANALYZE readings');
      await pool.end();
      // Let the loop probe write a quiet second first.
      await new Promise((r) => setTimeout(r, 1500));

      let done = false;
      const health: number[] = [];
      const prober = (async () => {
        while (!done) {
          const t0 = performance.now();
          const res = await fetch(`${bench!.base}/api/health`);
          await res.arrayBuffer();
          health.push(performance.now() - t0);
          await new Promise((r) => setTimeout(r, 50));
        }
      })();
      const from = Date.now();
      const t0 = performance.now();
      const res = await fetch(`${bench.base}/api/captures/${id}/finish`, {
        method: 'POST',
        headers,
      });
      const ms = performance.now() - t0;
      const to = Date.now();
      done = true;
      await prober;
      if (!res.ok) throw new Error(`finish answered ${res.status}: ${await res.text()}`);
      await res.arrayBuffer();
      await new Promise((r) => setTimeout(r, 1200));
      const loop = loopBetween(from, to);
      console.log(
        `  ${f(n).padStart(10)} readings: finish ${(ms / 1000).toFixed(2)} s; server event loop during it: max delay ${loop.max.toFixed(0)} ms, p99 ${loop.p99.toFixed(0)} ms (95th pct of 1 s windows); health answers p50 ${pct(health, 0.5).toFixed(1)} ms, max ${Math.max(...health).toFixed(0)} ms (n=${health.length})`,
      );
      recordFigure({
        figure: `finish of ${f(n)} readings, event-loop max delay`,
        measured: `${loop.max.toFixed(0)} ms (finish ${(ms / 1000).toFixed(1)} s)`,
        target: `≤ ${LOOP_MAX_TARGET_MS} ms`,
        met: loop.max <= LOOP_MAX_TARGET_MS,
      });
    }
    console.log(
      `  machine load average: ${os.loadavg()[0].toFixed(2)} on ${os.cpus().length} cores (other work on the machine inflates every figure)`,
    );
  } finally {
    await bench?.stop();
  }
}

if (
  process.argv[1] &&
  path.resolve(process.argv[1]) === path.resolve(PROJECT_ROOT, 'tests/bench/finishLoad.ts')
) {
  await benchFinishLoad();
}
