import path from 'node:path';
import os from 'node:os';
import pg from 'pg';
import WebSocket from 'ws';
import { socketProtocols } from '../../shared/protocol/socketAuth.js';
import { PROJECT_ROOT } from '../../server/index.js';
import { ReadingUploader, MemoryPendingStore } from '../../src/api/uploader.js';
import { LIVE_HANDOVER_MS, UPLOADER_FLUSH_MS } from '../../src/api/liveTiming.js';
import type { IngestResult, ReadingIn } from '../../shared/protocol/captures.js';
import { encodeReadingsF64, READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';
import { benchFetch, startBenchServer, type BenchServer } from './server.js';
import { recordFigure } from './summary.js';
import { LiveSocket } from '../../src/api/socket.js';
import { readingsTransport } from '../../src/api/readingsTransport.js';
import type { SendBatch } from '../../src/api/uploader.js';

// Issue 15's live path: benches recording at 100 readings/s each, every reading handed to the
// uploader as the bench's capture engine does (every LIVE_HANDOVER_MS) and sent by the uploader
// with the product's flush setting (UPLOADER_FLUSH_MS); ten of the captures watched over /ws.
// Latency runs from the moment a reading is made to its arrival at the watcher, so both waits on
// the bench, the request, the ingest, the commit and the fan-out are inside it. Captures are not
// in step (a lab's benches are not): each makes its readings and hands them over at its own phase.
// Transport `socket` (the product's default): each bench opens its own live socket, as a browser
// does, and the product's transport (src/api/readingsTransport.ts) sends every batch as a frame on
// it; `http` sends each batch as a POST, as the bench did before uploads moved onto the socket.
const pct = (xs: number[], p: number) =>
  xs.length
    ? [...xs].sort((a, b) => a - b)[Math.min(xs.length - 1, Math.floor(xs.length * p))]
    : NaN;

export interface LivePathFigures {
  benches: number;
  seconds: number;
  p50: number;
  p95: number;
  samples: number;
  missing: number;
  duplicates: number;
  complete: number;
  failures: number;
  drainedAfter: number;
  requests: number;
  transport: LiveTransport;
  /** The uploader's flush wait the figure was measured with. */
  flushMs: number;
  /** Batches that went by HTTP while the transport was `socket` (socket not open yet, or lost). */
  httpFallbacks: number;
}

export type LiveTransport = 'socket' | 'http';

export async function livePath(
  bench: BenchServer,
  opts: { benches?: number; seconds?: number; watched?: number; transport?: LiveTransport } = {},
): Promise<LivePathFigures> {
  const transport = opts.transport ?? 'socket';
  const benches = opts.benches ?? 50;
  const seconds = opts.seconds ?? 60;
  const watchedCount = Math.min(opts.watched ?? 10, benches);
  const { base, url } = bench;
  const token = await bench.token('technician');
  const headers = await bench.headers('technician');
  const pool = new pg.Pool({ connectionString: url, max: 2 });
  const ids = await Promise.all(Array.from({ length: benches }, () => bench.newCapture()));
  let requests = 0;
  let httpFallbacks = 0;
  const postBatch: SendBatch = async (
    id: number,
    readings: ReadingIn[],
    signal?: AbortSignal,
    encoding?: 'f64' | 'json',
  ): Promise<IngestResult> => {
    const binary = encoding === 'f64';
    const res = await benchFetch(`${base}/api/captures/${id}/readings`, {
      method: 'POST',
      headers: binary ? { ...headers, 'content-type': READINGS_F64_TYPE } : headers,
      body: binary ? encodeReadingsF64(readings) : JSON.stringify({ readings }),
      signal,
    });
    if (!res.ok) throw Object.assign(new Error(`HTTP ${res.status}`), { status: res.status });
    return (await res.json()) as IngestResult;
  };
  // One live socket per bench (the `ws` package's WebSocket: Node 20 has none of its own).
  const sockets =
    transport === 'socket'
      ? ids.map(
          () =>
            new LiveSocket({
              getToken: () => token,
              url: `${base.replace('http', 'ws')}/ws`,
              WebSocket: WebSocket as unknown as typeof globalThis.WebSocket,
            }),
        )
      : [];
  const until = performance.now() + 10_000;
  while (sockets.some((s) => !s.canUpload(1)) && performance.now() < until)
    await new Promise((r) => setTimeout(r, 20));
  const sendFor = (k: number): SendBatch =>
    transport === 'socket'
      ? readingsTransport({
          socket: sockets[k],
          http: postBatch,
          onSend: (via) => {
            requests++;
            if (via === 'http') httpFallbacks++;
          },
        })
      : (...args) => {
          requests++;
          return postBatch(...args);
        };
  // The product's settings: no flushMs given, so the uploader's own default applies (a trial
  // value may be given with BENCH_LIVE_FLUSH_MS, to see whether another setting would pay).
  const trialFlush = process.env.BENCH_LIVE_FLUSH_MS
    ? Number(process.env.BENCH_LIVE_FLUSH_MS)
    : null;
  const uploaders = ids.map(
    (id, k) =>
      new ReadingUploader(id, {
        store: new MemoryPendingStore(),
        send: sendFor(k),
        ...(trialFlush === null ? {} : { flushMs: trialFlush }),
      }),
  );
  const perBench = seconds * 100;
  const watchedIds = ids.slice(0, watchedCount);
  const latencies: number[] = [];
  const madeAt = new Map(ids.map((id) => [id, new Float64Array(perBench)]));
  const seen = new Map(watchedIds.map((id) => [id, new Uint8Array(perBench)]));
  let duplicates = 0;
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
          if (seen.get(id)![r.seq]) duplicates++;
          seen.get(id)![r.seq] = 1;
          latencies.push(now - madeAt.get(id)![r.seq]);
        }
      });
      return w;
    }),
  );
  await new Promise((r) => setTimeout(r, 200));

  // Capture k makes reading j at start + phase(k) + 10·j ms and hands what it made to its
  // uploader every LIVE_HANDOVER_MS at its own phase. One 2 ms ticker does the work of all.
  const phase = ids.map((_, k) => (k * 10) / benches);
  const handPhase = ids.map((_, k) => (k * LIVE_HANDOVER_MS) / benches);
  const next = ids.map(() => 0);
  const handed = ids.map(() => 0);
  const nextHand = ids.map((_, k) => handPhase[k]);
  const start = performance.now();
  const end = seconds * 1000;
  for (let tick = 0; ; tick++) {
    const due = start + tick * 2;
    await new Promise((r) => setTimeout(r, Math.max(0, due - performance.now())));
    const el = performance.now() - start;
    let done = true;
    for (let k = 0; k < benches; k++) {
      const at = madeAt.get(ids[k])!;
      while (next[k] < perBench && phase[k] + next[k] * 10 <= el) {
        at[next[k]] = start + phase[k] + next[k] * 10;
        next[k]++;
      }
      if (nextHand[k] <= el || next[k] === perBench) {
        if (next[k] > handed[k]) {
          const batch: ReadingIn[] = [];
          for (let s = handed[k]; s < next[k]; s++)
            batch.push({ seq: s, t: s * 0.01, value: 16e6 });
          handed[k] = next[k];
          void uploaders[k].add(batch);
        }
        while (nextHand[k] <= el) nextHand[k] += LIVE_HANDOVER_MS;
      }
      if (handed[k] < perBench) done = false;
    }
    if (done || el > end + 5000) break;
  }
  await Promise.all(uploaders.map((u) => u.drained()));
  const drainedAfter = (performance.now() - start) / 1000 - seconds;
  await new Promise((r) => setTimeout(r, 500));
  for (const w of watchers) w.close();
  const missing = [...seen.values()].reduce(
    (a, s) => a + s.length - s.reduce((x, y) => x + y, 0),
    0,
  );
  const counts = await pool.query<{ capture_id: number; n: number; d: number }>(
    'SELECT capture_id, count(*)::int AS n, count(DISTINCT seq)::int AS d FROM readings WHERE capture_id = ANY($1) GROUP BY capture_id',
    [ids],
  );
  const complete = counts.rows.filter((r) => r.n === perBench && r.d === perBench).length;
  const failures = uploaders.reduce((a, u) => a + u.snapshot().failures, 0);
  for (const u of uploaders) u.close();
  for (const s of sockets) s.close();
  await pool.end();
  return {
    benches,
    seconds,
    p50: pct(latencies, 0.5),
    p95: pct(latencies, 0.95),
    samples: latencies.length,
    missing,
    duplicates,
    complete,
    failures,
    drainedAfter,
    requests,
    transport,
    httpFallbacks,
    flushMs: trialFlush ?? UPLOADER_FLUSH_MS,
  };
}

/** The figure's line, beside its target and the settings it was measured with. */
export function livePathLine(f: LivePathFigures): string {
  const met = f.p95 <= 100 && f.missing === 0 && f.duplicates === 0 && f.complete === f.benches;
  return (
    `  live path, ${f.benches} benches p50 ${f.p50.toFixed(1)} ms, p95 ${f.p95.toFixed(1)} ms over ${f.samples.toLocaleString('en-US')} readings of the watched captures ` +
    `(made → watcher; hand-over every ${LIVE_HANDOVER_MS} ms and uploader flush ${f.flushMs} ms${f.flushMs === UPLOADER_FLUSH_MS ? '' : ' (trial, not the product setting)'} included); ` +
    `${f.missing} not delivered, ${f.duplicates} delivered twice, ${f.complete}/${f.benches} captures complete, ` +
    `${f.failures} failed batches, ${Math.round(f.requests / f.seconds)} batches/s ` +
    `over ${f.transport === 'socket' ? `the live socket (${f.httpFallbacks} by HTTP)` : 'HTTP'} — ` +
    `target p95 ≤ 100 ms, 0 lost, 0 duplicated: ${met ? 'met' : 'NOT met'}`
  );
}

/**
 * `npm run bench -- live` (BENCH_LIVE_SECONDS, default 60; BENCH_LIVE_BENCHES, default 50;
 * BENCH_LIVE_TRANSPORT `socket`, the default, or `http`).
 */
export async function benchLive(): Promise<void> {
  const bench = await startBenchServer();
  try {
    const load = os.loadavg()[0];
    const figures = await livePath(bench, {
      seconds: Number(process.env.BENCH_LIVE_SECONDS ?? 60),
      benches: Number(process.env.BENCH_LIVE_BENCHES ?? 50),
      transport: process.env.BENCH_LIVE_TRANSPORT === 'http' ? 'http' : 'socket',
    });
    console.log(
      `\nIssue 15 — live path over ${figures.transport === 'socket' ? 'the live socket' : 'HTTP'} (load ${load.toFixed(2)} at the start)`,
    );
    console.log(livePathLine(figures));
    recordFigure({
      figure: `live path, ${figures.benches} benches at 100 readings/s: p95 (${figures.seconds} s)`,
      measured: `${figures.p95.toFixed(1)} ms, ${figures.missing} lost, ${figures.duplicates} twice (${figures.transport})`,
      target: '≤ 100 ms, 0 lost, 0 twice',
      met:
        figures.p95 <= 100 &&
        figures.missing === 0 &&
        figures.duplicates === 0 &&
        figures.complete === figures.benches,
    });
  } finally {
    await bench.stop();
  }
}

if (
  process.argv[1] &&
  path.resolve(process.argv[1]) === path.resolve(PROJECT_ROOT, 'tests/bench/live.ts')
) {
  await benchLive();
}
