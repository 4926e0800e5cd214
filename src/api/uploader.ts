import type { IngestResult, ReadingIn } from '../../shared/protocol/captures';
import { UPLOADER_FLUSH_MS } from './liveTiming';

/**
 * Where unacknowledged readings wait: IndexedDB in the browser (a reload or crash loses
 * nothing), memory in tests. Keys are (captureId, seq), so storing a reading twice is harmless.
 */
export interface PendingStore {
  put(captureId: number, readings: ReadingIn[]): Promise<void>;
  /**
   * Up to `limit` pending readings of a capture, lowest seq first; with `afterSeq`, only those
   * whose seq is above it (the uploader asks for the readings after the batches it has in flight).
   */
  take(captureId: number, limit: number, afterSeq?: number): Promise<ReadingIn[]>;
  remove(captureId: number, seqs: number[]): Promise<void>;
  count(captureId: number): Promise<number>;
  /** Captures that still have pending readings (to resume after a reload). */
  captures(): Promise<number[]>;
}

/**
 * How a batch travels: `f64` is the compact binary body (four little-endian doubles a reading,
 * shared/protocol/readingsBinary.ts), `json` the `{ readings: [...] }` body every server takes.
 */
export type BatchEncoding = 'f64' | 'json';

/**
 * Sends one batch; resolves with the server's answer or rejects on any failure. `signal` aborts
 * when the uploader gives up waiting (see {@link UploaderOptions.sendTimeoutMs}); `encoding` is
 * the body to send (see {@link UploaderOptions.encoding}).
 */
export type SendBatch = (
  captureId: number,
  readings: ReadingIn[],
  signal?: AbortSignal,
  encoding?: BatchEncoding,
) => Promise<IngestResult>;

export interface UploaderOptions {
  store: PendingStore;
  send: SendBatch;
  /** Most readings per request. */
  batchSize?: number;
  /** How long readings may wait to be grouped into a batch (ms). */
  flushMs?: number;
  /**
   * Most batches awaiting the server's answer at once (1 sends one batch at a time). Each batch
   * holds the readings after the one before it, so in-flight batches never overlap.
   */
  maxInFlight?: number;
  /** The body to send first; `f64` falls back to `json` for good when the server refuses it. */
  encoding?: BatchEncoding;
  /**
   * Whether a failure means "this server does not take that body" (by default an error whose
   * `status` is 415): the uploader then resends in JSON, at once and without counting a failure.
   */
  isUnsupportedEncoding?: (err: unknown) => boolean;
  /** First and longest wait between retries (ms); doubles in between. */
  backoffMs?: [number, number];
  /**
   * Longest wait for the server's answer to one batch (ms): a half-open connection becomes a
   * failure that is retried instead of holding the uploader forever.
   */
  sendTimeoutMs?: number;
  onState?: (s: UploaderState) => void;
  /** A refusal that retrying cannot mend (400, 403, 404, 409): stop and say why. */
  isPermanent?: (err: unknown) => boolean;
  /**
   * The index (in the batch sent) of the one reading a refusal names as bad, else null. That
   * reading is dropped, counted in `refused`, and sending goes on with the rest.
   */
  refusedReading?: (err: unknown) => number | null;
}

export interface UploaderState {
  /** Readings not yet acknowledged: in the store plus those held in memory. */
  pending: number;
  sent: number;
  duplicates: number;
  failures: number;
  offline: boolean;
  lastError?: string;
  stopped?: string;
  /** Failed store operations (writes, reads, deletes). */
  storeErrors: number;
  storeError?: string;
  /** Readings whose store write failed, kept in this tab's memory only (closing the tab loses them). */
  held: number;
  /** Readings the server named as bad and that were dropped. */
  refused: number;
  refusedReason?: string;
  /** Readings that could be kept neither in the store nor in memory (must stay 0). */
  lost: number;
  lostReason?: string;
  /** Batches awaiting the server's answer right now. */
  inFlight?: number;
  /** The body batches are sent in (`json` after the server refused the binary one). */
  encoding?: BatchEncoding;
}

function message(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

/** What a send that outlived `sendTimeoutMs` rejects with. */
export class SendTimeoutError extends Error {
  constructor(ms: number) {
    super(`The server did not answer within ${Math.round(ms / 1000)} s.`);
    this.name = 'SendTimeoutError';
  }
}

/** An HTTP 415 (the server does not take this body's content type). */
function is415(err: unknown): boolean {
  return typeof err === 'object' && err !== null && (err as { status?: unknown }).status === 415;
}

/** One batch awaiting the server's answer. */
interface InFlight {
  count: number;
  /** Its highest seq. */
  last: number;
}

/**
 * Sends a capture's readings in batches and keeps every unacknowledged one in the store until the
 * server confirms it; after any failure it retries with exponential backoff. The server's
 * ingest is idempotent by (capture, seq), so resending is always safe. When the store cannot
 * take a write (a quota error, say), the readings are held in memory and sent the same way.
 *
 * Up to `maxInFlight` full batches travel at once (pipelining; a part batch waits for the one in
 * flight, so live readings gather instead of multiplying requests): each new batch takes the pending
 * readings above the highest seq already in flight, so batches are contiguous, ascending and
 * disjoint. A batch's answer acknowledges that batch's readings only — a later batch's success
 * never clears an earlier one that failed. After a failure (or a refusal that drops one reading,
 * or readings stored below what is in flight) no new batch leaves until every batch in flight
 * has answered; sending then starts again from the lowest pending reading, so nothing the store
 * holds is ever skipped.
 */
export class ReadingUploader {
  private readonly opts: Required<
    Omit<
      UploaderOptions,
      'onState' | 'isPermanent' | 'refusedReading' | 'encoding' | 'isUnsupportedEncoding'
    >
  > &
    Pick<UploaderOptions, 'onState' | 'isPermanent' | 'refusedReading'>;
  private timer: ReturnType<typeof setTimeout> | null = null;
  /** Set while the backoff after a failure runs: no batch leaves until it ends. */
  private backoffTimer: ReturnType<typeof setTimeout> | null = null;
  private dispatching = false;
  private closed = false;
  private backoff: number;
  private encoding: BatchEncoding;
  private readonly unsupported: (err: unknown) => boolean;
  private readonly state: UploaderState = {
    pending: 0,
    sent: 0,
    duplicates: 0,
    failures: 0,
    offline: false,
    storeErrors: 0,
    held: 0,
    refused: 0,
    lost: 0,
    inFlight: 0,
  };
  private drainWaiters: Array<() => void> = [];
  /** Readings handed to `add` whose store write has not finished yet. */
  private readonly storing = new Set<Promise<void>>();
  /** Readings the store would not take, by seq (insertion order is roughly seq order). */
  private readonly held = new Map<number, ReadingIn>();
  /** The store's pending count at its last successful count (or write). */
  private stored = 0;
  /** Readings handed to `add` whose store write has not finished (counted as pending). */
  private incoming = 0;
  /** Set when `add` kept readings since the last batch was taken (the dispatcher looks again). */
  private added = false;
  /** Batches awaiting an answer. */
  private readonly inflight = new Set<InFlight>();
  /** The highest seq handed to a batch since the pipeline was last empty (−1: none). */
  private cursor = -1;
  /** Start again from the lowest pending reading once the batches in flight have answered. */
  private rewind = false;
  /** The lowest seq kept since the dispatcher last began taking a batch. */
  private lowKept = Infinity;

  constructor(
    readonly captureId: number,
    opts: UploaderOptions,
  ) {
    const { encoding, isUnsupportedEncoding, ...rest } = opts;
    this.opts = {
      // A backlog (after a reload or an outage) goes in batches of 10,000 (half the most a request
      // or a socket frame takes, MAX_BATCH): each batch has fixed costs (the request or frame, the
      // session check, a transaction, its tile merge and commit). On this project's 2-core machine
      // a 200,000-reading backlog went at about 0.3× COPY in batches of 2,000, and in two idle runs
      // at 186 k and 245 k readings/s in batches of 5,000 against 262 k and 289 k in batches of
      // 10,000 (npm run bench -- oneStream). Live batches stay small; this only caps them.
      batchSize: 10_000,
      flushMs: UPLOADER_FLUSH_MS,
      maxInFlight: 3,
      backoffMs: [250, 8000],
      sendTimeoutMs: 30_000,
      ...rest,
    };
    this.encoding = encoding ?? 'f64';
    this.unsupported = isUnsupportedEncoding ?? is415;
    this.state.encoding = this.encoding;
    this.backoff = this.opts.backoffMs[0];
  }

  /**
   * Keeps the readings in the store (in memory if the store fails), then schedules a send.
   * Never rejects: readings that cannot be kept at all are counted in `lost`.
   */
  async add(readings: ReadingIn[]): Promise<void> {
    if (readings.length === 0) return;
    // Pending from the moment they are handed over, not only once the store has them.
    this.incoming += readings.length;
    this.updatePending();
    this.emit();
    const kept = this.keep(readings);
    this.storing.add(kept);
    try {
      await kept;
    } finally {
      this.storing.delete(kept);
    }
    this.emit();
    this.schedule(this.opts.flushMs);
  }

  private async keep(readings: ReadingIn[]): Promise<void> {
    try {
      await this.opts.store.put(this.captureId, readings);
      this.stored += readings.length;
      this.added = true;
    } catch (err) {
      this.storeFailed(err);
      try {
        for (const r of readings) this.held.set(r.seq, r);
        this.added = true;
      } catch (memErr) {
        this.state.lost += readings.filter((r) => !this.held.has(r.seq)).length;
        this.state.lostReason = message(memErr);
      }
    }
    // Kept below a batch already taken (stores finishing out of order): the dispatcher would
    // only look above it, so it must start again from the lowest pending reading.
    this.incoming -= readings.length;
    let low = Infinity;
    for (const r of readings) if (r.seq < low) low = r.seq;
    if (low <= this.cursor) this.rewind = true;
    if (low < this.lowKept) this.lowKept = low;
    this.updatePending();
  }

  /** Resumes sending what the store still holds (after a reload). */
  async resume(): Promise<void> {
    await this.recount();
    this.emit();
    this.schedule(0);
  }

  /**
   * Resolves once every reading handed to `add` so far is acknowledged (or the uploader was
   * stopped). Readings still being written to the store, and readings held in memory, count
   * as pending.
   */
  async drained(): Promise<void> {
    while (this.storing.size > 0) await Promise.allSettled([...this.storing]);
    if (this.closed && this.inflight.size === 0) return;
    if (this.idle() && this.state.pending === 0) return;
    return new Promise((resolve) => {
      this.drainWaiters.push(resolve);
      this.schedule(0);
    });
  }

  close(): void {
    this.closed = true;
    if (this.timer) clearTimeout(this.timer);
    if (this.backoffTimer) clearTimeout(this.backoffTimer);
    this.timer = this.backoffTimer = null;
    this.resolveDrain();
  }

  snapshot(): UploaderState {
    return { ...this.state };
  }

  /** Nothing in flight, being taken, waiting for a timer or backing off. */
  private idle(): boolean {
    return this.inflight.size === 0 && !this.dispatching && !this.timer && !this.backoffTimer;
  }

  private schedule(ms: number) {
    if (this.closed || this.dispatching || this.timer || this.backoffTimer) return;
    this.timer = setTimeout(() => {
      this.timer = null;
      void this.dispatch();
    }, ms);
  }

  private storeFailed(err: unknown) {
    this.state.storeErrors += 1;
    this.state.storeError = message(err);
  }

  private updatePending() {
    this.state.held = this.held.size;
    this.state.pending = this.stored + this.held.size + this.incoming;
  }

  /** Asks the store how many readings it holds; keeps the last estimate if it cannot say. */
  private async recount() {
    try {
      this.stored = await this.opts.store.count(this.captureId);
    } catch (err) {
      this.storeFailed(err);
    }
    this.updatePending();
  }

  /** The next batch above `after`: the lowest stored readings merged with the first held ones. */
  private async nextBatch(after: number): Promise<ReadingIn[]> {
    const size = this.opts.batchSize;
    const fromStore = await this.opts.store.take(
      this.captureId,
      size,
      after >= 0 ? after : undefined,
    );
    if (this.held.size === 0) return fromStore;
    return this.mergeHeld(fromStore, after);
  }

  /** `fromStore` with the held readings above `after`, lowest seq first, at most one batch. */
  private mergeHeld(fromStore: ReadingIn[], after: number): ReadingIn[] {
    const size = this.opts.batchSize;
    const merged = new Map<number, ReadingIn>();
    for (const r of fromStore) merged.set(r.seq, r);
    const held = [...this.held.values()].filter((r) => r.seq > after);
    held.sort((a, b) => a.seq - b.seq);
    for (const r of held.slice(0, size)) merged.set(r.seq, r);
    return [...merged.values()].sort((a, b) => a.seq - b.seq).slice(0, size);
  }

  /** Calls `send`, rejecting with {@link SendTimeoutError} if no answer comes in time. */
  private async sendOnce(batch: ReadingIn[], encoding: BatchEncoding): Promise<IngestResult> {
    const ms = this.opts.sendTimeoutMs;
    const ctrl = new AbortController();
    let timer: ReturnType<typeof setTimeout> | undefined;
    const timedOut = new Promise<never>((_, reject) => {
      timer = setTimeout(() => {
        const err = new SendTimeoutError(ms);
        reject(err);
        ctrl.abort(err);
      }, ms);
    });
    try {
      return await Promise.race([
        this.opts.send(this.captureId, batch, ctrl.signal, encoding),
        timedOut,
      ]);
    } finally {
      clearTimeout(timer);
    }
  }

  /** Forgets acknowledged (or dropped) readings: memory first, then the store. */
  private async forget(seqs: number[]): Promise<void> {
    for (const s of seqs) this.held.delete(s);
    this.updatePending();
    await this.opts.store.remove(this.captureId, seqs);
  }

  /** Any failure, of the store or of a send: note it and back off before the next batch. */
  private fail(err: unknown, inStore: boolean) {
    this.state.failures += 1;
    this.state.lastError = inStore ? `Browser storage failed: ${message(err)}` : message(err);
    if (inStore) this.storeFailed(err);
    else this.state.offline = true;
    this.rewind = true;
    this.startBackoff();
  }

  private startBackoff() {
    if (this.closed || this.backoffTimer) return;
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    const wait = this.backoff;
    this.backoff = Math.min(this.backoff * 2, this.opts.backoffMs[1]);
    this.backoffTimer = setTimeout(() => {
      this.backoffTimer = null;
      void this.dispatch();
    }, wait);
  }

  /**
   * Takes batches from the store and sends them until `maxInFlight` are in flight or nothing is
   * left to take. Never awaits an answer: each batch settles on its own in {@link settle}.
   */
  private async dispatch(): Promise<void> {
    if (this.dispatching || this.closed || this.backoffTimer) return;
    this.dispatching = true;
    let tookNothing = false;
    try {
      while (!this.closed && !this.backoffTimer && this.inflight.size < this.opts.maxInFlight) {
        if (this.rewind) {
          // Wait for the batches in flight; then start again from the lowest pending reading.
          if (this.inflight.size > 0) break;
          this.rewind = false;
        }
        if (this.inflight.size === 0) this.cursor = -1;
        this.added = false;
        this.lowKept = Infinity;
        let batch: ReadingIn[];
        try {
          batch = await this.nextBatch(this.cursor);
        } catch (err) {
          // The store cannot be read: still send what memory holds, then retry the store.
          batch = this.mergeHeld([], this.cursor);
          if (this.stored > 0) this.fail(err, true);
        }
        if (this.closed) break;
        if (batch.length === 0) {
          tookNothing = true;
          break;
        }
        // A part batch waits for the batch in flight: while live, readings gather into the next
        // batch instead of requests multiplying, so under load batches grow and each bench keeps
        // one request in the server's queue. Only full batches (a backlog) travel side by side.
        if (this.inflight.size > 0 && batch.length < this.opts.batchSize) break;
        this.cursor = Math.max(this.cursor, batch[batch.length - 1].seq);
        // Readings kept while the store was read may lie below the batch without being in it.
        if (this.lowKept <= this.cursor) this.rewind = true;
        this.launch(batch);
      }
    } catch (err) {
      // Nothing above should throw; if something does, retry rather than stall.
      this.fail(err, false);
    } finally {
      this.dispatching = false;
    }
    if (tookNothing && this.inflight.size === 0 && !this.backoffTimer) {
      // Nothing pending as far as the store says: the drain is complete unless readings came in
      // while it was read (then look again) or the store's count disagrees (then recount).
      await this.recount();
      if (this.added) this.schedule(0);
      else if (this.state.pending > 0 && !this.closed) this.schedule(this.opts.flushMs);
      else this.resolveDrain();
      this.emit();
    } else if (this.closed && this.inflight.size === 0) this.resolveDrain();
  }

  /** Sends one batch without waiting for it. */
  private launch(batch: ReadingIn[]) {
    const entry: InFlight = { count: batch.length, last: batch[batch.length - 1].seq };
    this.inflight.add(entry);
    this.state.inFlight = this.inflight.size;
    void this.settle(batch, entry);
  }

  /** Waits for one batch's answer and acts on it: forget, drop one reading, stop or retry. */
  private async settle(batch: ReadingIn[], entry: InFlight): Promise<void> {
    const encoding = this.encoding;
    try {
      let res: IngestResult | null = null;
      let drop: number[] = [];
      try {
        res = await this.sendOnce(batch, encoding);
        drop = batch.map((r) => r.seq);
      } catch (err) {
        if (encoding !== 'json' && this.unsupported(err)) {
          // The server does not take the binary body: JSON from now on, this batch again at once.
          this.encoding = this.state.encoding = 'json';
          this.rewind = true;
          return;
        }
        const bad = this.opts.refusedReading?.(err) ?? null;
        if (bad === null || !Number.isInteger(bad) || bad < 0 || bad >= batch.length) {
          if (this.opts.isPermanent?.(err)) {
            this.state.failures += 1;
            this.state.lastError = this.state.stopped = message(err);
            this.closed = true;
            if (this.timer) clearTimeout(this.timer);
            if (this.backoffTimer) clearTimeout(this.backoffTimer);
            this.timer = this.backoffTimer = null;
          } else this.fail(err, false);
          return;
        }
        // The server names one bad reading: drop it; the rest of the batch goes again.
        this.state.refused += 1;
        this.state.refusedReason = message(err);
        drop = [batch[bad].seq];
        this.rewind = true;
      }
      if (res) {
        this.state.sent += res.accepted;
        this.state.duplicates += res.duplicates;
        if (!this.backoffTimer) {
          this.state.offline = false;
          this.state.lastError = undefined;
          this.backoff = this.opts.backoffMs[0];
        }
      }
      try {
        await this.forget(drop);
      } catch (err) {
        this.fail(err, true);
      }
    } catch (err) {
      this.fail(err, false);
    } finally {
      this.inflight.delete(entry);
      this.state.inFlight = this.inflight.size;
      await this.recount();
      this.emit();
      this.next();
    }
  }

  /** After a batch settled: send more, or tell `drained()` waiters that all is done. */
  private next() {
    if (this.closed) {
      if (this.inflight.size === 0) this.resolveDrain();
      return;
    }
    if (this.backoffTimer || this.dispatching) return;
    if (this.inflight.size === 0 && this.state.pending === 0 && !this.added) {
      if (!this.timer) this.resolveDrain();
      return;
    }
    let inFlightReadings = 0;
    for (const b of this.inflight) inFlightReadings += b.count;
    const more = this.rewind || this.added || this.state.pending > inFlightReadings;
    if (more && this.inflight.size < this.opts.maxInFlight) this.schedule(0);
  }

  private resolveDrain() {
    const waiters = this.drainWaiters;
    this.drainWaiters = [];
    for (const w of waiters) w();
  }

  private emit() {
    this.opts.onState?.({ ...this.state });
  }
}

/** A PendingStore in memory (tests, and browsers without IndexedDB). */
export class MemoryPendingStore implements PendingStore {
  private readonly byCapture = new Map<number, Map<number, ReadingIn>>();
  /**
   * Captures whose map holds its readings in increasing seq order (every new seq was above the
   * last): `take` then reads the first ones instead of sorting all of them (a backlog of 200,000
   * readings would otherwise be sorted once a batch).
   */
  private readonly ordered = new Map<number, number>();

  async put(captureId: number, readings: ReadingIn[]) {
    let m = this.byCapture.get(captureId);
    if (!m) this.byCapture.set(captureId, (m = new Map()));
    let last = m.size === 0 ? -Infinity : (this.ordered.get(captureId) ?? NaN);
    for (const r of readings) {
      if (!(r.seq > last) && !m.has(r.seq)) last = NaN;
      else if (r.seq > last) last = r.seq;
      m.set(r.seq, r);
    }
    this.ordered.set(captureId, last);
  }
  async take(captureId: number, limit: number, afterSeq = -1) {
    const m = this.byCapture.get(captureId);
    if (!m) return [];
    if (!Number.isNaN(this.ordered.get(captureId) ?? NaN)) {
      const out: ReadingIn[] = [];
      for (const r of m.values()) {
        if (r.seq <= afterSeq) continue;
        out.push(r);
        if (out.length >= limit) break;
      }
      return out;
    }
    return [...m.values()]
      .filter((r) => r.seq > afterSeq)
      .sort((a, b) => a.seq - b.seq)
      .slice(0, limit);
  }
  async remove(captureId: number, seqs: number[]) {
    const m = this.byCapture.get(captureId);
    if (m) for (const s of seqs) m.delete(s);
  }
  async count(captureId: number) {
    return this.byCapture.get(captureId)?.size ?? 0;
  }
  async captures() {
    return [...this.byCapture].filter(([, m]) => m.size > 0).map(([id]) => id);
  }
}
