import type { IngestResult, ReadingIn } from '../../shared/protocol/captures';

/**
 * Where unacknowledged readings wait: IndexedDB in the browser (a reload or crash loses
 * nothing), memory in tests. Keys are (captureId, seq), so storing a reading twice is harmless.
 */
export interface PendingStore {
  put(captureId: number, readings: ReadingIn[]): Promise<void>;
  /** Up to `limit` pending readings of a capture, lowest seq first. */
  take(captureId: number, limit: number): Promise<ReadingIn[]>;
  remove(captureId: number, seqs: number[]): Promise<void>;
  count(captureId: number): Promise<number>;
  /** Captures that still have pending readings (to resume after a reload). */
  captures(): Promise<number[]>;
}

/**
 * Sends one batch; resolves with the server's answer or rejects on any failure. `signal` aborts
 * when the uploader gives up waiting (see {@link UploaderOptions.sendTimeoutMs}).
 */
export type SendBatch = (
  captureId: number,
  readings: ReadingIn[],
  signal?: AbortSignal,
) => Promise<IngestResult>;

export interface UploaderOptions {
  store: PendingStore;
  send: SendBatch;
  /** Most readings per request. */
  batchSize?: number;
  /** How long readings may wait to be grouped into a batch (ms). */
  flushMs?: number;
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

/**
 * Sends a capture's readings in batches and keeps every unacknowledged one in the store until the
 * server confirms it; after any failure it retries with exponential backoff. The server's
 * ingest is idempotent by (capture, seq), so resending is always safe. When the store cannot
 * take a write (a quota error, say), the readings are held in memory and sent the same way.
 */
export class ReadingUploader {
  private readonly opts: Required<
    Omit<UploaderOptions, 'onState' | 'isPermanent' | 'refusedReading'>
  > &
    Pick<UploaderOptions, 'onState' | 'isPermanent' | 'refusedReading'>;
  private timer: ReturnType<typeof setTimeout> | null = null;
  private running = false;
  private closed = false;
  private backoff: number;
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
  };
  private drainWaiters: Array<() => void> = [];
  /** Readings handed to `add` whose store write has not finished yet. */
  private readonly storing = new Set<Promise<void>>();
  /** Readings the store would not take, by seq (insertion order is roughly seq order). */
  private readonly held = new Map<number, ReadingIn>();
  /** The store's pending count at its last successful count (or write). */
  private stored = 0;
  /** Set when `add` kept readings while a send was under way (the pump looks again). */
  private added = false;

  constructor(
    readonly captureId: number,
    opts: UploaderOptions,
  ) {
    this.opts = {
      batchSize: 2000,
      flushMs: 100,
      backoffMs: [250, 8000],
      sendTimeoutMs: 30_000,
      ...opts,
    };
    this.backoff = this.opts.backoffMs[0];
  }

  /**
   * Keeps the readings in the store (in memory if the store fails), then schedules a send.
   * Never rejects: readings that cannot be kept at all are counted in `lost`.
   */
  async add(readings: ReadingIn[]): Promise<void> {
    if (readings.length === 0) return;
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
    if (this.closed) return;
    if (this.state.pending === 0 && !this.running && !this.timer) return;
    return new Promise((resolve) => {
      this.drainWaiters.push(resolve);
      this.schedule(0);
    });
  }

  close(): void {
    this.closed = true;
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    this.resolveDrain();
  }

  snapshot(): UploaderState {
    return { ...this.state };
  }

  private schedule(ms: number) {
    if (this.closed || this.running || this.timer) return;
    this.timer = setTimeout(() => {
      this.timer = null;
      void this.pump();
    }, ms);
  }

  private storeFailed(err: unknown) {
    this.state.storeErrors += 1;
    this.state.storeError = message(err);
  }

  private updatePending() {
    this.state.held = this.held.size;
    this.state.pending = this.stored + this.held.size;
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

  /** The next batch: the lowest stored readings merged with the first held ones. */
  private async nextBatch(): Promise<ReadingIn[]> {
    const size = this.opts.batchSize;
    const fromStore = await this.opts.store.take(this.captureId, size);
    if (this.held.size === 0) return fromStore;
    const merged = new Map<number, ReadingIn>();
    for (const r of fromStore) merged.set(r.seq, r);
    let n = 0;
    for (const r of this.held.values()) {
      if (n++ >= size) break;
      merged.set(r.seq, r);
    }
    return [...merged.values()].sort((a, b) => a.seq - b.seq).slice(0, size);
  }

  /** Calls `send`, rejecting with {@link SendTimeoutError} if no answer comes in time. */
  private async sendOnce(batch: ReadingIn[]): Promise<IngestResult> {
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
      return await Promise.race([this.opts.send(this.captureId, batch, ctrl.signal), timedOut]);
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

  private async pump(): Promise<void> {
    if (this.running || this.closed) return;
    this.running = true;
    let retryIn = 0;
    /** Any failure, of the store or of the send: note it and back off. */
    const fail = (err: unknown, inStore: boolean) => {
      this.state.failures += 1;
      this.state.lastError = inStore ? `Browser storage failed: ${message(err)}` : message(err);
      if (inStore) this.storeFailed(err);
      else this.state.offline = true;
      retryIn = this.backoff;
      this.backoff = Math.min(this.backoff * 2, this.opts.backoffMs[1]);
    };
    try {
      for (;;) {
        this.added = false;
        let batch: ReadingIn[];
        let unreadable: unknown = null;
        try {
          batch = await this.nextBatch();
        } catch (err) {
          // The store cannot be read: still send what memory holds, then retry the store.
          unreadable = err;
          batch = [...this.held.values()].slice(0, this.opts.batchSize);
        }
        if (batch.length === 0) {
          // Retry an unreadable store unless, as far as we know, it holds nothing of ours.
          if (unreadable !== null && this.stored > 0) fail(unreadable, true);
          break;
        }
        let storeErr: unknown = unreadable;
        try {
          let res: IngestResult | null = null;
          let drop: number[] = [];
          try {
            res = await this.sendOnce(batch);
            drop = batch.map((r) => r.seq);
          } catch (err) {
            const bad = this.opts.refusedReading?.(err) ?? null;
            if (bad === null || !Number.isInteger(bad) || bad < 0 || bad >= batch.length) {
              if (this.opts.isPermanent?.(err)) {
                this.state.failures += 1;
                this.state.lastError = this.state.stopped = message(err);
                this.closed = true;
              } else fail(err, false);
              break;
            }
            // The server names one bad reading: drop it and send the rest.
            this.state.refused += 1;
            this.state.refusedReason = message(err);
            drop = [batch[bad].seq];
          }
          if (res) {
            this.state.sent += res.accepted;
            this.state.duplicates += res.duplicates;
            this.state.offline = false;
            this.state.lastError = undefined;
            this.backoff = this.opts.backoffMs[0];
          }
          try {
            await this.forget(drop);
          } catch (err) {
            storeErr = err;
          }
          if (storeErr !== null) {
            fail(storeErr, true);
            break;
          }
        } finally {
          await this.recount();
          this.emit();
        }
      }
    } catch (err) {
      // Nothing above should throw; if something does, retry rather than stall.
      fail(err, false);
    } finally {
      this.running = false;
    }
    if (this.closed) this.resolveDrain();
    else if (retryIn) this.schedule(retryIn);
    else if (this.state.pending > 0 || this.added) this.schedule(0);
    else this.resolveDrain();
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

  async put(captureId: number, readings: ReadingIn[]) {
    let m = this.byCapture.get(captureId);
    if (!m) this.byCapture.set(captureId, (m = new Map()));
    for (const r of readings) m.set(r.seq, r);
  }
  async take(captureId: number, limit: number) {
    const m = this.byCapture.get(captureId);
    if (!m) return [];
    return [...m.values()].sort((a, b) => a.seq - b.seq).slice(0, limit);
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
