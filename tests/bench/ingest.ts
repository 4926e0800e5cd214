import path from 'node:path';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import WebSocket from 'ws';
import { socketProtocols } from '../../shared/protocol/socketAuth.js';
import { PROJECT_ROOT } from '../../server/index.js';
import { ReadingUploader, MemoryPendingStore } from '../../src/api/uploader.js';
import type { IngestResult } from '../../shared/protocol/captures.js';
import { benchFetch, startBenchServer, type BenchServer } from './server.js';

// Ingest, decimated-read and live-path figures against a real PostgreSQL and a real server
// process (the load generator runs in this process, the server in another).
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
const pct = (xs: number[], p: number) =>
  [...xs].sort((a, b) => a - b)[Math.min(xs.length - 1, Math.floor(xs.length * p))];

export async function benchIngest(): Promise<void> {
  let bench: BenchServer | undefined;
  try {
    bench = await startBenchServer();
    const { base, url } = bench;
    const token = await bench.token('technician');
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

    // 4. Live path: readings made at 100/s go through the bench's own uploader (grouped every
    // 50 ms) and are watched over WebSocket; latency from the reading's creation to its arrival.
    const live = await newCapture(0.01);
    const ws = new WebSocket(`${base.replace('http', 'ws')}/ws`, socketProtocols(token));
    await new Promise((r) => ws.on('open', r));
    ws.send(JSON.stringify({ type: 'watch', captureId: live }));
    await new Promise((r) => setTimeout(r, 100));
    const sentAt = new Map<number, number>();
    const latencies: number[] = [];
    ws.on('message', (data) => {
      const msg = JSON.parse(String(data));
      if (msg.type !== 'readings-batch') return;
      const now = performance.now();
      for (const r of msg.readings) latencies.push(now - (sentAt.get(r.seq) ?? now));
    });
    const uploader = new ReadingUploader(live, {
      store: new MemoryPendingStore(),
      flushMs: 50,
      send: async (id, readings) => {
        const res = await benchFetch(`${base}/api/captures/${id}/readings`, {
          method: 'POST',
          headers,
          body: JSON.stringify({ readings }),
        });
        if (!res.ok) throw new Error(`HTTP ${res.status}`);
        return (await res.json()) as IngestResult;
      },
    });
    const liveN = 1000;
    const startLive = performance.now();
    for (let seq = 0; seq < liveN; seq++) {
      // Hold the 100/s cadence against the wall clock, not against timer drift.
      const due = startLive + seq * 10;
      await new Promise((r) => setTimeout(r, Math.max(0, due - performance.now())));
      sentAt.set(seq, performance.now());
      void uploader.add([{ seq, t: seq * 0.01, value: 16e6 }]);
    }
    await uploader.drained();
    await new Promise((r) => setTimeout(r, 300));
    uploader.close();
    ws.close();
    // 5. Many benches at once: 50 captures at 100 readings/s each, through the uploader.
    const benches = 50;
    const seconds = Number(process.env.BENCH_MANY_SECONDS ?? 60);
    const manyIds = await Promise.all(Array.from({ length: benches }, () => newCapture(0.01)));
    const uploaders = manyIds.map(
      (id) =>
        new ReadingUploader(id, {
          store: new MemoryPendingStore(),
          flushMs: 100,
          send: async (cid, readings) => {
            const res = await benchFetch(`${base}/api/captures/${cid}/readings`, {
              method: 'POST',
              headers,
              body: JSON.stringify({ readings }),
            });
            if (!res.ok) throw new Error(`HTTP ${res.status}`);
            return (await res.json()) as IngestResult;
          },
        }),
    );
    const perBench = seconds * 100;
    // Ten of the fifty are watched, one socket each: the live path from a reading's creation (its
    // hand-over to the uploader, which waits up to its 100 ms flush) to its arrival at the watcher.
    const watchedIds = manyIds.slice(0, 10);
    const manyLatencies: number[] = [];
    const madeAt = new Map(watchedIds.map((id) => [id, new Float64Array(perBench)]));
    const seen = new Map(watchedIds.map((id) => [id, new Uint8Array(perBench)]));
    let manyDuplicates = 0;
    const watchers = await Promise.all(
      watchedIds.map(async (id) => {
        const w = new WebSocket(`${base.replace('http', 'ws')}/ws`, socketProtocols(token));
        await new Promise((r) => w.on('open', r));
        w.send(JSON.stringify({ type: 'watch', captureId: id }));
        w.on('message', (data) => {
          const msg = JSON.parse(String(data));
          if (msg.type !== 'readings-batch') return;
          const now = performance.now();
          for (const r of msg.readings as { seq: number }[]) {
            if (seen.get(id)![r.seq]) manyDuplicates++;
            seen.get(id)![r.seq] = 1;
            manyLatencies.push(now - madeAt.get(id)![r.seq]);
          }
        });
        return w;
      }),
    );
    await new Promise((r) => setTimeout(r, 200));
    const manyStart = performance.now();
    for (let tick = 0; tick < seconds * 10; tick++) {
      const due = manyStart + tick * 100;
      await new Promise((r) => setTimeout(r, Math.max(0, due - performance.now())));
      const now = performance.now();
      for (const at of madeAt.values()) at.fill(now, tick * 10, tick * 10 + 10);
      for (const u of uploaders) {
        void u.add(
          Array.from({ length: 10 }, (_, i) => ({
            seq: tick * 10 + i,
            t: (tick * 10 + i) * 0.01,
            value: 16e6,
          })),
        );
      }
    }
    await Promise.all(uploaders.map((u) => u.drained()));
    await new Promise((r) => setTimeout(r, 500));
    for (const w of watchers) w.close();
    const manyMissing = [...seen.values()].reduce(
      (a, s) => a + s.length - s.reduce((x, y) => x + y, 0),
      0,
    );
    const lag = (performance.now() - manyStart) / 1000 - seconds;
    const counts = await pool.query<{ capture_id: number; n: number; d: number }>(
      'SELECT capture_id, count(*)::int AS n, count(DISTINCT seq)::int AS d FROM readings WHERE capture_id = ANY($1) GROUP BY capture_id',
      [manyIds],
    );
    const complete = counts.rows.filter((r) => r.n === perBench && r.d === perBench).length;
    const failures = uploaders.reduce((a, u) => a + u.snapshot().failures, 0);
    for (const u of uploaders) u.close();
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
      `  ${benches} benches       ${complete}/${benches} captures hold exactly ${f(perBench)} readings each, no duplicates; ${seconds} s at 100 readings/s each, drained ${lag.toFixed(1)} s after the last reading, ${failures} failed requests (target: nothing lost, nothing duplicated)`,
    );
    console.log(
      `  live path           p50 ${pct(latencies, 0.5).toFixed(1)} ms, p95 ${pct(latencies, 0.95).toFixed(1)} ms over ${latencies.length} readings at 100/s, one capture alone, uploader grouping every 50 ms (anchor)`,
    );
    console.log(
      `  live path, ${benches} benches p50 ${pct(manyLatencies, 0.5).toFixed(1)} ms, p95 ${pct(manyLatencies, 0.95).toFixed(1)} ms over ${manyLatencies.length} readings of 10 watched captures, flush every 100 ms included; ${manyMissing} not delivered, ${manyDuplicates} delivered twice (issue 15 target: p95 ≤ 100 ms, 0 lost, 0 duplicated)`,
    );
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
