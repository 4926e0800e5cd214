import path from 'node:path';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { PROJECT_ROOT } from '../../server/index.js';
import { benchFetch, startBenchServer, type BenchServer } from './server.js';
import { livePath, livePathLine } from './live.js';
import { recordFigure } from './summary.js';

// Ingest, decimated-read and live-path figures against a real PostgreSQL and a real server
// process (the load generator runs in this process, the server in another).
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

export async function benchIngest(): Promise<void> {
  let bench: BenchServer | undefined;
  try {
    bench = await startBenchServer();
    const { base, url } = bench;
    const headers = await bench.headers('technician');
    const newCapture = (gateTime = 0.01) => bench!.newCapture({ gateTime });

    const pool = new pg.Pool({ connectionString: url, max: 4 });
    const rows = (n: number, offset = 0) =>
      Array.from({ length: n }, (_, i) => ({
        seq: offset + i,
        t: (offset + i) * 0.01,
        value: 16e6 + Math.sin(i) * 1e-3,
      }));

    // 1. Through the API: 4 captures in parallel, batches of 5,000 readings, bodies pre-serialised.
    const perCapture = 150_000;
    const batch = 5_000;
    const concurrency = 4;
    const ids = await Promise.all(Array.from({ length: concurrency }, () => newCapture()));
    const bodies = ids.map(() =>
      Array.from({ length: perCapture / batch }, (_, b) =>
        JSON.stringify({ readings: rows(batch, b * batch) }),
      ),
    );
    let t0 = performance.now();
    await Promise.all(
      ids.map(async (id, k) => {
        for (const body of bodies[k]) {
          const res = await benchFetch(`${base}/api/captures/${id}/readings`, {
            method: 'POST',
            headers,
            body,
          });
          if (!res.ok) throw new Error(`ingest failed: ${res.status}`);
          await res.arrayBuffer();
        }
      }),
    );
    const apiSeconds = (performance.now() - t0) / 1000;
    const apiRate = (perCapture * concurrency) / apiSeconds;

    // 2. Raw COPY of the same number of rows, same table, same parallelism.
    const copyIds = await Promise.all(Array.from({ length: concurrency }, () => newCapture()));
    const copyOne = async (id: number) => {
      const client = await pool.connect();
      try {
        const stream = client.query(
          copyFrom('COPY readings (capture_id, seq, t, value, flags) FROM STDIN'),
        );
        const lines = function* () {
          for (let b = 0; b < perCapture / batch; b++) {
            yield rows(batch, b * batch)
              .map((r) => `${id}\t${r.seq}\t${r.t}\t${r.value}\t0\n`)
              .join('');
          }
        };
        await pipeline(Readable.from(lines()), stream);
      } finally {
        client.release();
      }
    };
    t0 = performance.now();
    await Promise.all(copyIds.map(copyOne));
    const copySeconds = (performance.now() - t0) / 1000;
    const copyRate = (perCapture * concurrency) / copySeconds;

    // 3. Decimated read of a 1,000,000-reading finished capture to 2,000 points.
    const big = await newCapture();
    {
      const client = await pool.connect();
      await client.query(
        `INSERT INTO readings (capture_id, seq, t, value) SELECT $1, g, g * 0.01, 16e6 + sin(g / 1000.0) * 1e-3 + random() * 1e-5 FROM generate_series(0, 999999) g`,
        [big],
      );
      await client.query(
        'UPDATE captures SET reading_count = 1000000, highest_seq = 999999 WHERE id = $1',
        [big],
      );
      client.release();
    }
    t0 = performance.now();
    const fin = await fetch(`${base}/api/captures/${big}/finish`, { method: 'POST', headers });
    if (!fin.ok) throw new Error(`finish failed: ${fin.status}`);
    const finishSeconds = (performance.now() - t0) / 1000;
    const reads: number[] = [];
    let points = 0;
    for (let i = 0; i < 11; i++) {
      t0 = performance.now();
      const res = await fetch(`${base}/api/captures/${big}/readings?maxPoints=2000`, { headers });
      const body = (await res.json()) as { readings: unknown[] };
      reads.push(performance.now() - t0);
      points = body.readings.length;
    }
    const zooms: number[] = [];
    for (let i = 0; i < 11; i++) {
      const from = 100_000 + i * 50_000;
      t0 = performance.now();
      await (
        await fetch(
          `${base}/api/captures/${big}/readings?from=${from}&to=${from + 200_000}&maxPoints=2000`,
          { headers },
        )
      ).json();
      zooms.push(performance.now() - t0);
    }

    // 4. Live path, one capture alone (the anchor), then 50 benches at 100 readings/s each, with
    // the product's hand-over and flush settings (tests/bench/live.ts).
    const alone = await livePath(bench, { benches: 1, seconds: 10, watched: 1 });
    const many = await livePath(bench, {
      benches: 50,
      seconds: Number(process.env.BENCH_MANY_SECONDS ?? 60),
    });
    await pool.end();

    const f = (x: number) => Math.round(x).toLocaleString('en-US');
    console.log('\nIngest and reads (PostgreSQL 15, server in its own process, 2 cores)');
    console.log(
      `  API ingest          ${f(apiRate)} readings/s  (${concurrency} captures × ${f(perCapture)} in batches of ${f(batch)}; target ≥ 50,000)`,
    );
    console.log(`  raw COPY            ${f(copyRate)} rows/s      (same rows, same parallelism)`);
    console.log(
      `  API / COPY          ${((apiRate / copyRate) * 100).toFixed(0)} %         (target ≥ 50 %)`,
    );
    console.log(
      `  finish 1e6 readings ${finishSeconds.toFixed(2)} s         (summary, stability, budget and tiles, once)`,
    );
    console.log(
      `  decimated read      ${median(reads).toFixed(1)} ms median, ${points} points (1,000,000 → 2,000; target ≤ 150 ms)`,
    );
    console.log(
      `  zoomed read         ${median(zooms).toFixed(1)} ms median (200,000-reading window → 2,000)`,
    );
    console.log(
      `  live path, alone   p50 ${alone.p50.toFixed(1)} ms, p95 ${alone.p95.toFixed(1)} ms over ${alone.samples} readings, one capture at 100 readings/s, same settings (anchor)`,
    );
    console.log(livePathLine(many));
    recordFigure({
      figure: `live path, ${many.benches} benches at 100 readings/s: p95`,
      measured: `${many.p95.toFixed(1)} ms, ${many.missing} lost, ${many.duplicates} twice (${many.transport})`,
      target: '≤ 100 ms, 0 lost, 0 twice',
      met:
        many.p95 <= 100 &&
        many.missing === 0 &&
        many.duplicates === 0 &&
        many.complete === many.benches,
    });
  } finally {
    await bench?.stop();
  }
}

if (
  process.argv[1] &&
  path.resolve(process.argv[1]) === path.resolve(PROJECT_ROOT, 'tests', 'bench', 'ingest.ts')
) {
  await benchIngest();
}
