import path from 'node:path';
import os from 'node:os';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { gzipSync } from 'node:zlib';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { PROJECT_ROOT } from '../../server/index.js';
import { oadev, octaveMs, stability } from '../../shared/analysis/index.js';
import { STABILITY_KINDS } from '../../shared/protocol/captures.js';
import { whiteFm } from '../helpers/random.js';
import { encodeReadingsF64, READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';
import { benchFetch, startBenchServer, type BenchServer } from './server.js';

// Issue 15's figures, each beside its target and the anchor measured in the same run:
// one stream against COPY, decimated reads of an open and a finished 1,000,000-reading capture,
// cost growth with capture length, the analysis of 1 M readings, OADEV against numpy, and the
// client's initial JavaScript. (The live path under 50 benches is printed by ingest.ts.)
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
const f = (x: number) => Math.round(x).toLocaleString('en-US');
const mark = (ok: boolean) => (ok ? 'met' : 'NOT met');

type Row = { seq: number; t: number; value: number };
const rows = (n: number, offset = 0): Row[] =>
  Array.from({ length: n }, (_, i) => ({
    seq: offset + i,
    t: (offset + i) * 0.01,
    value: 16e6 + Math.sin(offset + i) * 1e-3,
  }));

/**
 * Sends `n` readings to a capture in batches of `batch`, bodies prepared beforehand; readings/s.
 * `binary`: the compact body (shared/protocol/readingsBinary.ts) instead of JSON.
 */
async function ingestOneStream(
  bench: BenchServer,
  id: number,
  n: number,
  batch: number,
  binary = false,
): Promise<number> {
  const headers = {
    ...(await bench.headers('technician')),
    ...(binary ? { 'content-type': READINGS_F64_TYPE } : {}),
  };
  const bodies: Array<string | Uint8Array> = [];
  for (let b = 0; b < n; b += batch) {
    const part = rows(Math.min(batch, n - b), b);
    bodies.push(binary ? encodeReadingsF64(part) : JSON.stringify({ readings: part }));
  }
  const t0 = performance.now();
  for (const body of bodies) {
    const res = await benchFetch(`${bench.base}/api/captures/${id}/readings`, {
      method: 'POST',
      headers,
      body,
    });
    if (!res.ok) throw new Error(`ingest answered ${res.status}: ${await res.text()}`);
    await res.arrayBuffer();
  }
  return n / ((performance.now() - t0) / 1000);
}

/** Median time of `k` decimated reads (2,000 points) of a whole capture, ms. */
async function decimatedRead(
  bench: BenchServer,
  id: number,
  k = 9,
): Promise<{ ms: number; points: number }> {
  const headers = await bench.headers('viewer');
  const times: number[] = [];
  let points = 0;
  for (let i = 0; i < k; i++) {
    const t0 = performance.now();
    const res = await fetch(`${bench.base}/api/captures/${id}/readings?maxPoints=2000`, {
      headers,
    });
    const body = (await res.json()) as { readings: unknown[] };
    if (!res.ok) throw new Error(`read answered ${res.status}`);
    times.push(performance.now() - t0);
    points = body.readings.length;
  }
  return { ms: median(times), points };
}

async function timed<T>(fn: () => Promise<T>): Promise<[T, number]> {
  const t0 = performance.now();
  const out = await fn();
  return [out, performance.now() - t0];
}

async function serverFigures(): Promise<void> {
  const bench = await startBenchServer();
  const pool = new pg.Pool({ connectionString: bench.url, max: 2 });
  try {
    const headers = await bench.headers('technician');
    const viewer = await bench.headers('viewer');

    // 1. One stream against COPY: 200,000 readings in batches of 5,000, one connection each.
    const n = 200_000;
    const id = await bench.newCapture();
    const apiRate = await ingestOneStream(bench, id, n, 5_000);
    const binaryRate = await ingestOneStream(bench, await bench.newCapture(), n, 5_000, true);
    await pool.query(
      'CREATE TABLE bench_copy_anchor (LIKE readings INCLUDING DEFAULTS INCLUDING CONSTRAINTS INCLUDING INDEXES)',
    );
    const client = await pool.connect();
    let copyRate: number;
    try {
      const t0 = performance.now();
      const stream = client.query(
        copyFrom('COPY bench_copy_anchor (capture_id, seq, t, value, flags) FROM STDIN'),
      );
      const lines = function* () {
        for (let b = 0; b < n; b += 5_000)
          yield rows(5_000, b)
            .map((r) => `${id}\t${r.seq}\t${r.t}\t${r.value}\t0\n`)
            .join('');
      };
      await pipeline(Readable.from(lines()), stream);
      copyRate = n / ((performance.now() - t0) / 1000);
    } finally {
      client.release();
    }
    console.log('\nIssue 15 — one stream, reads, cost growth (server in its own process)');
    console.log(
      `  one stream, API     ${f(apiRate)} readings/s (200,000 in batches of 5,000, JSON bodies prepared)`,
    );
    console.log(
      `  one stream, COPY    ${f(copyRate)} rows/s into a logged table with the same primary key (anchor)`,
    );
    console.log(
      `  one stream, binary  ${f(binaryRate)} readings/s (the same, as ${READINGS_F64_TYPE} bodies)`,
    );
    console.log(
      `  API / COPY          ${(apiRate / copyRate).toFixed(2)} JSON, ${(binaryRate / copyRate).toFixed(2)} binary — target ≥ 0.50: ${mark(Math.max(apiRate, binaryRate) / copyRate >= 0.5)}`,
    );

    // 2. Decimated read of a 1,000,000-reading capture, open, then finished.
    const big = await bench.newCapture();
    const [, insertMs] = await timed(() =>
      pool.query(
        `INSERT INTO readings (capture_id, seq, t, value) SELECT $1, g, g * 0.01, 16e6 + sin(g / 1000.0) * 1e-3 + random() * 1e-5 FROM generate_series(0, 999999) g`,
        [big],
      ),
    );
    await pool.query(
      'UPDATE captures SET reading_count = 1000000, highest_seq = 999999 WHERE id = $1',
      [big],
    );
    await pool.query('ANALYZE readings');
    const open = await decimatedRead(bench, big);
    const [finish, finishMs] = await timed(() =>
      fetch(`${bench.base}/api/captures/${big}/finish`, { method: 'POST', headers }),
    );
    if (!finish.ok) throw new Error(`finish answered ${finish.status}`);
    const done = await decimatedRead(bench, big);
    console.log(
      `  decimated read, open      ${open.ms.toFixed(1)} ms median, ${open.points} points from 1,000,000 — target ≤ 50 ms: ${mark(open.ms <= 50)}`,
    );
    console.log(
      `  decimated read, finished  ${done.ms.toFixed(1)} ms median (anchor); the open capture's tiles were made as the rows went in (one INSERT of 1e6 rows with tiles: ${(insertMs / 1000).toFixed(1)} s), finish ${(finishMs / 1000).toFixed(1)} s`,
    );

    // 3. Cost growth: ingest rate, decimated read and analysis for 10 k, 100 k and 1 M readings.
    console.log(
      '  cost growth (one stream, batches of 5,000; read = 2,000 points of the open capture; analysis = MDEV at octave τ in the worker, finished capture):',
    );
    // Warm the analysis worker first (its start-up compiles the server's TypeScript): a tiny capture.
    const warm = await bench.newCapture();
    await ingestOneStream(bench, warm, 100, 100);
    await (
      await fetch(`${bench.base}/api/captures/${warm}/analysis?kind=mdev`, { headers: viewer })
    ).arrayBuffer();
    for (const size of [10_000, 100_000, 1_000_000]) {
      const c = await bench.newCapture();
      const rate = await ingestOneStream(bench, c, size, 5_000);
      const read = await decimatedRead(bench, c, 5);
      const fin = await fetch(`${bench.base}/api/captures/${c}/finish`, {
        method: 'POST',
        headers,
      });
      if (!fin.ok) throw new Error(`finish answered ${fin.status}`);
      const [res, analysisMs] = await timed(() =>
        fetch(`${bench.base}/api/captures/${c}/analysis?kind=mdev`, { headers: viewer }),
      );
      if (!res.ok) throw new Error(`analysis answered ${res.status}`);
      await res.arrayBuffer();
      console.log(
        `    ${f(size).padStart(9)} readings: ingest ${f(rate).padStart(8)} readings/s, read ${read.ms.toFixed(1).padStart(6)} ms, analysis ${analysisMs.toFixed(0).padStart(6)} ms (${(analysisMs / (size / 1e6)).toFixed(0)} ms per million)`,
      );
    }
    console.log(
      '    10,000,000 readings: skipped — about 3 minutes of ingest alone on this machine; the three sizes above show the trend (reads flat, analysis linear)',
    );
  } finally {
    await pool.end();
    await bench.stop();
  }
}

/** The analysis of 1,000,000 readings in this process: all seven kinds at octave τ. */
function analysisFigures(): void {
  const N = 1_000_000;
  const y = whiteFm(N, 1e-11, 1);
  const parts: string[] = [];
  let total = 0;
  for (const kind of STABILITY_KINDS) {
    const ms = octaveMs(N, kind);
    stability(kind, y.subarray(0, 10_000), 1, octaveMs(10_000, kind)); // warm-up
    const t0 = performance.now();
    stability(kind, y, 1, ms);
    const took = performance.now() - t0;
    total += took;
    parts.push(`${kind} ${took.toFixed(0)}`);
  }
  console.log('\nIssue 15 — analysis');
  console.log(
    `  1,000,000 readings, all seven kinds at octave τ: ${total.toFixed(0)} ms (${parts.join(', ')} ms) — target < 1,000 ms: ${mark(total < 1000)}`,
  );

  // OADEV against a vectorised numpy reference, same length, same τ, in the same run.
  const ms = octaveMs(N, 'oadev');
  oadev(y, 1, ms);
  const js: number[] = [];
  for (let i = 0; i < 5; i++) {
    const t0 = performance.now();
    oadev(y, 1, ms);
    js.push(performance.now() - t0);
  }
  const py = spawnSync(
    'python3',
    [
      '-c',
      `
import time, numpy as np
y = np.random.default_rng(1).standard_normal(${N}) * 1e-11
ms = [${ms.join(',')}]
def oadev(y, ms):
    x = np.concatenate(([0.0], np.cumsum(y)))
    out = []
    for m in ms:
        d = x[2*m:] - 2*x[m:-m] + x[:-2*m]
        out.append(np.sqrt(np.mean(d*d) / (2.0*m*m)))
    return out
oadev(y, ms)
best = min((lambda t0: (oadev(y, ms), time.perf_counter() - t0)[1])(time.perf_counter()) for _ in range(5))
print(best * 1000)
`,
    ],
    { encoding: 'utf8' },
  );
  const jsMs = median(js);
  if (py.status === 0 && py.stdout.trim()) {
    const npMs = Number(py.stdout.trim());
    console.log(
      `  OADEV 1,000,000 points, ${ms.length} octave τ: ${jsMs.toFixed(1)} ms (deviations, noise identification and EDF) against numpy ${npMs.toFixed(1)} ms (deviations only, best of 5) — ratio ${(jsMs / npMs).toFixed(2)}, target ≤ 0.40: ${mark(jsMs / npMs <= 0.4)}`,
    );
  } else {
    console.log(
      `  OADEV 1,000,000 points, ${ms.length} octave τ: ${jsMs.toFixed(1)} ms — numpy line skipped (python3 with numpy not found)`,
    );
  }
}

/** The client's initial JavaScript: the entry script and its module preloads in dist/index.html, gzipped. */
function clientFigures(): void {
  const dist = path.join(PROJECT_ROOT, 'dist');
  const index = path.join(dist, 'index.html');
  console.log('\nIssue 15 — client');
  if (!existsSync(index)) {
    console.log('  initial JS: skipped — no dist/ (build the client with `npm run build` first)');
    return;
  }
  const html = readFileSync(index, 'utf8');
  const srcs = [
    ...html.matchAll(
      /<script[^>]+src="([^"]+\.js)"|<link[^>]+rel="modulepreload"[^>]+href="([^"]+\.js)"/g,
    ),
  ].map((m) => m[1] ?? m[2]);
  let raw = 0;
  let gz = 0;
  for (const src of new Set(srcs)) {
    const file = path.join(dist, src.replace(/^\//, ''));
    if (!existsSync(file)) continue;
    const bytes = readFileSync(file);
    raw += bytes.length;
    gz += gzipSync(bytes, { level: 9 }).length;
  }
  const age = (Date.now() - statSync(index).mtimeMs) / 60_000;
  console.log(
    `  initial JS: ${(gz / 1000).toFixed(1)} kB gzipped (${(raw / 1000).toFixed(0)} kB raw, ${new Set(srcs).size} files; build ${age.toFixed(0)} min old) — target ≤ 150 kB: ${mark(gz / 1000 <= 150)} (about 85 kB when issue 15 was filed)`,
  );
}

export async function benchScale(): Promise<void> {
  console.log(
    `\n(load average ${os.loadavg()[0].toFixed(2)} on ${os.cpus().length} cores at the start of the issue-15 figures)`,
  );
  await serverFigures();
  analysisFigures();
  clientFigures();
}

if (
  process.argv[1] &&
  path.resolve(process.argv[1]) === path.resolve(PROJECT_ROOT, 'tests/bench/scale.ts')
) {
  await benchScale();
}
