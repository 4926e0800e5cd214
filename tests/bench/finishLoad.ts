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
// `BENCH_FINISH_SIZES=1000000,3000000` chooses the sizes; BENCH_SKIP_10M=1 leaves 10 M out;
// `BENCH_FINISH_REPEAT=3` finishes that many captures of each size (the median is recorded).
// A finish of 50,000 readings goes first, so no measured finish includes a worker's start.
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
    const repeat = Number(process.env.BENCH_FINISH_REPEAT ?? 1);
    const runs = [50_000, ...sizes.flatMap((n) => Array.from({ length: repeat }, () => n))];
    const bySize = new Map<number, Array<{ ms: number; loopMax: number }>>();
    for (const [k, n] of runs.entries()) {
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
      if (k > 0) bySize.set(n, [...(bySize.get(n) ?? []), { ms, loopMax: loop.max }]);
      console.log(
        `  ${f(n).padStart(10)} readings${k === 0 ? ' (first, worker start included)' : ''}: finish ${(ms / 1000).toFixed(2)} s; server event loop during it: max delay ${loop.max.toFixed(0)} ms, p99 ${loop.p99.toFixed(0)} ms (95th pct of 1 s windows); health answers p50 ${pct(health, 0.5).toFixed(1)} ms, max ${Math.max(...health).toFixed(0)} ms (n=${health.length})`,
      );
    }
    for (const [n, xs] of bySize) {
      const ms = pct(
        xs.map((x) => x.ms),
        0.5,
      );
      const loopMax = pct(
        xs.map((x) => x.loopMax),
        0.5,
      );
      if (xs.length > 1)
        console.log(
          `  ${f(n).padStart(10)} readings, median of ${xs.length}: finish ${(ms / 1000).toFixed(2)} s, event-loop max delay ${loopMax.toFixed(0)} ms`,
        );
      recordFigure({
        figure: `finish of ${f(n)} readings, event-loop max delay`,
        measured: `${loopMax.toFixed(0)} ms (finish ${(ms / 1000).toFixed(1)} s)`,
        target: `≤ ${LOOP_MAX_TARGET_MS} ms`,
        met: loopMax <= LOOP_MAX_TARGET_MS,
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
