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

/** Sends one batch; resolves with the server's answer or rejects on any failure. */
export type SendBatch = (captureId: number, readings: ReadingIn[]) => Promise<IngestResult>;

export interface UploaderOptions {
  store: PendingStore;
  send: SendBatch;
  /** Most readings per request. */
  batchSize?: number;
  /** How long readings may wait to be grouped into a batch (ms). */
  flushMs?: number;
  /** First and longest wait between retries (ms); doubles in between. */
  backoffMs?: [number, number];
  onState?: (s: UploaderState) => void;
  /** A refusal that retrying cannot mend (400, 403, 404, 409): stop and say why. */
  isPermanent?: (err: unknown) => boolean;
}

export interface UploaderState {
  pending: number;
  sent: number;
  duplicates: number;
  failures: number;
  offline: boolean;
  lastError?: string;
  stopped?: string;
}

/**
 * Sends a capture's readings in batches and keeps every unacknowledged one in the store until the
 * server confirms it; after any failure it retries with exponential backoff. The server's
 * ingest is idempotent by (capture, seq), so resending is always safe.
 */
export class ReadingUploader {
  private readonly opts: Required<Omit<UploaderOptions, 'onState' | 'isPermanent'>> & Pick<UploaderOptions, 'onState' | 'isPermanent'>;
  private timer: ReturnType<typeof setTimeout> | null = null;
  private running = false;
  private closed = false;
  private backoff: number;
  private readonly state: UploaderState = { pending: 0, sent: 0, duplicates: 0, failures: 0, offline: false };
  private drainWaiters: Array<() => void> = [];
  /** Readings handed to `add` whose store write has not finished yet. */
  private readonly storing = new Set<Promise<void>>();

  constructor(
    readonly captureId: number,
    opts: UploaderOptions,
  ) {
    this.opts = { batchSize: 2000, flushMs: 100, backoffMs: [250, 8000], ...opts };
    this.backoff = this.opts.backoffMs[0];
  }

  /** Keeps the readings in the store, then schedules a send. */
  async add(readings: ReadingIn[]): Promise<void> {
    if (readings.length === 0) return;
    const stored = this.opts.store.put(this.captureId, readings);
    this.storing.add(stored);
    try {
      await stored;
    } finally {
      this.storing.delete(stored);
    }
    this.state.pending += readings.length;
    this.emit();
    this.schedule(this.opts.flushMs);
  }

  /** Resumes sending what the store still holds (after a reload). */
  async resume(): Promise<void> {
    this.state.pending = await this.opts.store.count(this.captureId);
    this.emit();
    this.schedule(0);
  }

  /**
   * Resolves once every reading handed to `add` so far is acknowledged (or the uploader was
   * stopped). Readings still being written to the store count as pending.
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

  private async pump(): Promise<void> {
    if (this.running || this.closed) return;
    this.running = true;
    let retryIn = 0;
    try {
      for (;;) {
        const batch = await this.opts.store.take(this.captureId, this.opts.batchSize);
        if (batch.length === 0) break;
        try {
          const res = await this.opts.send(this.captureId, batch);
          await this.opts.store.remove(this.captureId, batch.map((r) => r.seq));
          this.state.sent += res.accepted;
          this.state.duplicates += res.duplicates;
          this.state.offline = false;
          this.state.lastError = undefined;
          this.backoff = this.opts.backoffMs[0];
        } catch (err) {
          this.state.failures += 1;
          this.state.lastError = err instanceof Error ? err.message : String(err);
          if (this.opts.isPermanent?.(err)) {
            this.state.stopped = this.state.lastError;
            this.closed = true;
            break;
          }
          this.state.offline = true;
          retryIn = this.backoff;
          this.backoff = Math.min(this.backoff * 2, this.opts.backoffMs[1]);
          break;
        } finally {
          this.state.pending = await this.opts.store.count(this.captureId);
          this.emit();
        }
      }
    } finally {
      this.running = false;
    }
    if (this.closed) this.resolveDrain();
    else if (retryIn) this.schedule(retryIn);
    else if (this.state.pending > 0) this.schedule(0);
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
