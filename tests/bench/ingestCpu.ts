import { PerformanceObserver } from 'node:perf_hooks';
import { PLAUSIBILITY, PlausibilityWindow } from '../../shared/protocol/plausibility.js';
import { decodeReadingsF64, encodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';
import { mulberry32, gaussian } from '../helpers/random.js';
import { batchColumns, flagImplausible } from '../../server/services/ingestColumns.js';
import { recordFigure } from './summary.js';

// Issue 15, one stream: the server's CPU per reading before the database — the plausibility
// judge (shared/protocol/plausibility.ts) and the binary body's decode
// (shared/protocol/readingsBinary.ts), alone and as the ingest runs them before the database
// (server/services/ingestColumns.ts) — for 1,000,000 readings in batches of 5,000, with the
// garbage collector's time during each pass (a `gc` PerformanceObserver). On this 2-core machine
// every µs the server spends per reading is taken from PostgreSQL. `npm run bench -- ingestCpu`.
// Printed, never asserted.

const N = 1_000_000;
const BATCH = 5_000;
const ROUNDS = 5;

/** A counter's readings around 16 MHz with noise, rare steps and a few absurd values. */
function readingsOf(n: number) {
  const u = mulberry32(1501);
  const noise = gaussian(1502);
  const values = new Float64Array(n);
  let level = 16e6;
  for (let i = 0; i < n; i++) {
    const r = u();
    if (r < 0.0005) level += (u() - 0.5) * 100;
    values[i] = r > 0.9995 ? level * 1.5 : level + noise() * 1e-3;
  }
  return values;
}

/** Garbage-collection time (ms) observed while `run` runs, and its wall time. */
async function timed(run: () => void): Promise<{ ms: number; gcMs: number }> {
  let gcMs = 0;
  const obs = new PerformanceObserver((list) => {
    for (const e of list.getEntries()) gcMs += e.duration;
  });
  obs.observe({ entryTypes: ['gc'] });
  const t0 = performance.now();
  run();
  const ms = performance.now() - t0;
  // GC entries are delivered asynchronously: let them arrive before counting.
  await new Promise((r) => setTimeout(r, 20));
  obs.disconnect();
  return { ms, gcMs };
}

/**
 * The judge as it was before the window was kept sorted (commit cea6186's parent), reproduced for
 * the "before" line: a ring of the last 32 accepted values, two copies sorted at every refresh.
 */
class SortingWindow {
  private readonly ring = new Float64Array(PLAUSIBILITY.window);
  private count = 0;
  private next = 0;
  private readonly sorted = new Float64Array(PLAUSIBILITY.window);
  private readonly dev = new Float64Array(PLAUSIBILITY.window);
  private since = Infinity;
  private m = 0;
  private s = 0;
  constructor(private readonly nominal: number | null) {}
  private static median(xs: Float64Array): number {
    const n = xs.length;
    return n % 2 ? xs[(n - 1) >> 1] : (xs[n / 2 - 1] + xs[n / 2]) / 2;
  }
  private push(v: number) {
    this.ring[this.next] = v;
    this.next = (this.next + 1) % this.ring.length;
    if (this.count < this.ring.length) this.count++;
    this.since++;
  }
  private refresh() {
    const k = this.count;
    const sorted = k === this.sorted.length ? this.sorted : this.sorted.subarray(0, k);
    sorted.set(k === this.ring.length ? this.ring : this.ring.subarray(0, k));
    sorted.sort();
    this.m = SortingWindow.median(sorted);
    const dev = k === this.dev.length ? this.dev : this.dev.subarray(0, k);
    for (let i = 0; i < k; i++) dev[i] = Math.abs(sorted[i] - this.m);
    dev.sort();
    this.s = SortingWindow.median(dev);
    this.since = 0;
  }
  check(v: number): boolean {
    if (!Number.isFinite(v) || Math.abs(v) > PLAUSIBILITY.maxMagnitude) return false;
    const n = this.nominal;
    if (n !== null && n > 0 && Math.abs(v - n) > PLAUSIBILITY.nominalFactor * n) return false;
    if (this.count >= PLAUSIBILITY.minWindow) {
      if (this.since >= PLAUSIBILITY.refreshEvery) this.refresh();
      const d = Math.abs(v - this.m);
      if (d > PLAUSIBILITY.madFactor * this.s && d > PLAUSIBILITY.relativeFloor * Math.abs(this.m))
        return false;
    }
    this.push(v);
    return true;
  }
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

export async function benchIngestCpu(): Promise<void> {
  const values = readingsOf(N);
  const bodies: Buffer[] = [];
  for (let b = 0; b < N; b += BATCH) {
    const batch = [];
    for (let i = b; i < b + BATCH; i++) batch.push({ seq: i, t: i * 0.01, value: values[i] });
    // As the raw body parser hands it over: a Buffer of its own.
    bodies.push(Buffer.from(encodeReadingsF64(batch)));
  }

  // The JSON bodies as express.json() hands them over (parsed beforehand: the parse is the body
  // parser's, not the ingest's).
  const parsed = bodies.map((b) => {
    const cols = decodeReadingsF64(b);
    if ('reason' in cols) throw new Error(cols.reason);
    return { readings: cols.seq.map((seq, i) => ({ seq, t: cols.t[i], value: cols.value[i] })) };
  });

  let sink = 0;
  const stages: Record<string, () => void> = {
    'plausibility judge, before (sorting)': () => {
      const w = new SortingWindow(16e6);
      let ok = 0;
      for (let i = 0; i < N; i++) if (w.check(values[i])) ok++;
      sink += ok;
    },
    'plausibility judge (sorted window)': () => {
      const w = new PlausibilityWindow(16e6);
      let ok = 0;
      for (let i = 0; i < N; i++) if (w.check(values[i])) ok++;
      sink += ok;
    },
    'binary decode': () => {
      for (const body of bodies) {
        const cols = decodeReadingsF64(body);
        if ('reason' in cols) throw new Error(cols.reason);
        sink += cols.value.length;
      }
    },
    // What server/services/ingest.ts runs per batch before the database (ingestColumns.ts).
    'ingest columns + judge (binary body)': () => {
      const w = new PlausibilityWindow(16e6);
      for (const body of bodies) {
        const cols = batchColumns(body);
        flagImplausible(w, cols.values, cols.flags);
        sink += cols.maxSeq;
      }
    },
    'ingest columns + judge (JSON body)': () => {
      const w = new PlausibilityWindow(16e6);
      for (const body of parsed) {
        const cols = batchColumns(body);
        flagImplausible(w, cols.values, cols.flags);
        sink += cols.maxSeq;
      }
    },
  };

  console.log(
    `\ningest CPU per reading (${N.toLocaleString('en')} readings, batches of ${BATCH}, median of ${ROUNDS})`,
  );
  for (const [name, run] of Object.entries(stages)) {
    run(); // warm-up: let the JIT settle
    const ms: number[] = [];
    const gc: number[] = [];
    for (let r = 0; r < ROUNDS; r++) {
      const t = await timed(run);
      ms.push(t.ms);
      gc.push(t.gcMs);
    }
    const perReading = (median(ms) * 1000) / N;
    console.log(
      `  ${name.padEnd(36)} ${perReading.toFixed(3)} µs/reading  (${median(ms).toFixed(1)} ms, GC ${median(gc).toFixed(1)} ms)`,
    );
    recordFigure({
      figure: `ingest CPU: ${name}`,
      measured: `${perReading.toFixed(3)} µs/reading`,
      target: '—',
      met: null,
    });
  }
  if (sink < 0) console.log(sink);
}
