/**
 * The analysis pool: worker threads (server/analysis/worker.ts) that compute capture analyses off
 * the event loop, so a viewer polling a large open capture never delays a technician's ingest.
 * In front of the workers: answers cached per capture, query and reading count, and concurrent
 * requests for the same capture and query coalesced onto one computation.
 */
import { Worker } from 'node:worker_threads';
import os from 'node:os';
import { AppError } from '../errors.js';
import { AnalysisError } from '../../shared/analysis/index.js';
import type { AnalysisJob, FinishJob, FinishResult, JobError, WorkerReply } from './protocol.js';

const ENTRY = new URL('./worker-entry.mjs', import.meta.url);

interface Pending {
  resolve(v: { json: string; readingCount: number; finish?: FinishResult }): void;
  reject(err: unknown): void;
}

/**
 * Which workers a job runs on. `analysis`: viewers' analyses, background work at a lower CPU
 * priority (nice 10). `finish`: one worker of its own at the server's priority for finishes and
 * aborts — a user waits for them with the capture locked, and at nice 10 the worker gets a
 * small share of a core whenever anything of the server's own session is busy (PostgreSQL, the
 * event loop): measured with two busy processes in that session, a 1 M-reading finish took
 * 28.5 s in a nice-10 worker against 4.0 s at nice 0 and 5.1 s on the event loop (medians of 3).
 * Nor does a finish queue behind viewers' analyses.
 */
type Lane = 'analysis' | 'finish';

interface Slot {
  worker: Worker;
  lane: Lane;
  busy: boolean;
  pending: Map<number, Pending>;
}

interface Queued {
  body: { job: AnalysisJob } | { finish: FinishJob };
  pending: Pending;
}

/** Workers for a 2-core machine: one, leaving a core for the event loop and PostgreSQL. */
export function defaultPoolSize(): number {
  const cores =
    typeof os.availableParallelism === 'function' ? os.availableParallelism() : os.cpus().length;
  return Math.max(1, Math.min(4, cores - 1));
}

function toError(e: JobError): Error {
  if (e.type === 'app') return new AppError(e.status ?? 500, e.code, e.message, e.details);
  if (e.type === 'analysis')
    return new AnalysisError(e.code as ConstructorParameters<typeof AnalysisError>[0], e.message);
  return Object.assign(new Error(e.message), { code: e.code });
}

export interface AnalysisPoolStats {
  computed: number;
  /** Finish and abort jobs handed to a worker (issue 15), and of those the ones it answered. */
  finishesStarted: number;
  finishes: number;
  cacheHits: number;
  coalesced: number;
}

/**
 * The answer with what it covers: the readings the analysis was computed on, the capture's count
 * when the request read it (an open capture's answer may be a few seconds old) and when it was
 * computed. Appended to the cached JSON text, so a cache hit costs no parse.
 */
function withCoverage(json: string, readings: number, captureReadings: number, at: number): string {
  const coverage = {
    readings,
    captureReadings: Math.max(readings, captureReadings),
    computedAt: new Date(at).toISOString(),
  };
  return `${json.slice(0, -1)},"coverage":${JSON.stringify(coverage)}}`;
}

export class AnalysisPool {
  private readonly slots: Slot[] = [];
  private readonly queues: Record<Lane, Queued[]> = { analysis: [], finish: [] };
  private readonly inFlight = new Map<
    string,
    Promise<{ json: string; readingCount: number; at: number }>
  >();
  private readonly cache = new Map<
    string,
    { readingCount: number; state: string; json: string; at: number; took: number }
  >();
  private nextId = 1;
  private closed = false;
  readonly stats: AnalysisPoolStats = {
    computed: 0,
    finishesStarted: 0,
    finishes: 0,
    cacheHits: 0,
    coalesced: 0,
  };

  /**
   * `openFreshMs`: an open capture's answer is served for this long (or twice the time it took,
   * if longer) even when readings arrived since — a viewer polling a capture that grows every
   * 100 ms would otherwise keep a core busy recomputing. 0 recomputes on every new reading.
   * `primaryUrl`: the database finishes read in (their snapshot is the primary's) when
   * `databaseUrl` is a read replica; `databaseUrl` by default.
   */
  constructor(
    private readonly databaseUrl: string,
    private readonly size = defaultPoolSize(),
    private readonly opts: { cacheSize?: number; openFreshMs?: number; primaryUrl?: string } = {},
  ) {}

  private spawn(lane: Lane): Slot {
    const worker = new Worker(ENTRY, {
      workerData: {
        databaseUrl: this.databaseUrl,
        primaryUrl: this.opts.primaryUrl ?? this.databaseUrl,
        nice: lane === 'analysis' ? 10 : 0,
      },
    });
    worker.unref();
    const slot: Slot = { worker, lane, busy: false, pending: new Map() };
    worker.on('message', (msg: WorkerReply) => {
      const p = slot.pending.get(msg.id);
      slot.pending.delete(msg.id);
      slot.busy = false;
      if (p) {
        if (msg.ok)
          p.resolve({ json: msg.json, readingCount: msg.readingCount, finish: msg.finish });
        else p.reject(toError(msg.error));
      }
      this.pump();
    });
    const fail = (err: unknown) => {
      for (const p of slot.pending.values())
        p.reject(err instanceof Error ? err : new Error(String(err)));
      slot.pending.clear();
      const i = this.slots.indexOf(slot);
      if (i >= 0) this.slots.splice(i, 1);
      this.pump();
    };
    worker.on('error', fail);
    worker.on('exit', (code) => {
      if (!this.closed) fail(new Error(`analysis worker stopped (${code})`));
    });
    this.slots.push(slot);
    return slot;
  }

  private pump(): void {
    for (const lane of ['finish', 'analysis'] as const) {
      const queue = this.queues[lane];
      const size = lane === 'analysis' ? this.size : 1;
      while (queue.length && !this.closed) {
        const mine = this.slots.filter((s) => s.lane === lane);
        let slot = mine.find((s) => !s.busy);
        if (!slot && mine.length < size) slot = this.spawn(lane);
        if (!slot) break;
        const { body, pending } = queue.shift()!;
        const id = this.nextId++;
        slot.busy = true;
        slot.pending.set(id, pending);
        slot.worker.postMessage({ id, ...body });
      }
    }
  }

  private run(
    body: { job: AnalysisJob } | { finish: FinishJob },
  ): Promise<{ json: string; readingCount: number; finish?: FinishResult }> {
    if (this.closed) return Promise.reject(new Error('analysis pool closed'));
    const lane: Lane = 'finish' in body ? 'finish' : 'analysis';
    return new Promise((resolve, reject) => {
      this.queues[lane].push({ body, pending: { resolve, reject } });
      this.pump();
    });
  }

  /**
   * Starts the finish worker ahead of the first large finish (a worker's start, about 1–3 s of
   * module loading here, would otherwise be part of that finish). Does nothing once it runs.
   */
  warmFinish(): void {
    if (this.closed || this.slots.some((s) => s.lane === 'finish')) return;
    this.spawn('finish');
  }

  /** False once closed: a finish then computes its summary on its own thread. */
  get available(): boolean {
    return !this.closed;
  }

  /**
   * A finish's or an abort's reading, summary and seal, done in the finish worker (FinishJob):
   * the event loop only sends the job and takes the answer. Not cached and not coalesced: each
   * finish computes once, inside its own transaction. Throws (never an AnalysisError: the worker
   * turns that into the explained empty summary) when the worker fails; the caller then does the
   * work on its own thread.
   */
  async finish(job: FinishJob): Promise<FinishResult> {
    const running = this.run({ finish: job });
    this.stats.finishesStarted++;
    const done = await running;
    this.stats.finishes++;
    return done.finish!;
  }

  /**
   * The analysis of a capture. `current` is the capture as the request read it: an answer computed
   * at the same reading count and state is served from the cache; a computation already running
   * for the same capture and query is joined instead of started again. The answer is the JSON
   * text, serialised once however many requests it serves.
   */
  async analysis(
    job: AnalysisJob,
    current: { readingCount: number; state: string },
  ): Promise<string> {
    const key = `${job.captureId}|${job.kind}|${job.taus}|${job.confidence ?? ''}|${job.drift ?? ''}`;
    const hit = this.cache.get(key);
    const freshMs = this.opts.openFreshMs ?? 5000;
    const fresh =
      !!hit &&
      freshMs > 0 &&
      hit.state === 'open' &&
      current.state === 'open' &&
      Date.now() - hit.at < Math.max(freshMs, 2 * hit.took);
    if (
      hit &&
      ((hit.readingCount === current.readingCount && hit.state === current.state) || fresh)
    ) {
      this.stats.cacheHits++;
      this.cache.delete(key);
      this.cache.set(key, hit);
      return withCoverage(hit.json, hit.readingCount, current.readingCount, hit.at);
    }
    const running = this.inFlight.get(key);
    if (running) {
      this.stats.coalesced++;
      const done = await running;
      return withCoverage(done.json, done.readingCount, current.readingCount, done.at);
    }
    const startedAt = Date.now();
    const started = this.run({ job }).then((r) => ({
      json: r.json,
      readingCount: r.readingCount,
      at: Date.now(),
    }));
    this.inFlight.set(key, started);
    try {
      const done = await started;
      this.stats.computed++;
      this.cache.delete(key);
      this.cache.set(key, {
        readingCount: done.readingCount,
        state: current.state,
        json: done.json,
        at: done.at,
        took: done.at - startedAt,
      });
      if (this.cache.size > (this.opts.cacheSize ?? 64))
        this.cache.delete(this.cache.keys().next().value!);
      return withCoverage(done.json, done.readingCount, current.readingCount, done.at);
    } finally {
      this.inFlight.delete(key);
    }
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const q of [...this.queues.finish.splice(0), ...this.queues.analysis.splice(0)])
      q.pending.reject(new Error('analysis pool closed'));
    await Promise.all(this.slots.splice(0).map((s) => s.worker.terminate()));
  }
}
