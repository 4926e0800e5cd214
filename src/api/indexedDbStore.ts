import type { ReadingIn } from '../../shared/protocol/captures';
import type { PendingStore } from './uploader';

export const DB_NAME = 'driftbench-pending';
/** Version 1 kept one record per reading in {@link READINGS_V1}; version 2 keeps chunks. */
export const DB_VERSION = 2;
/** Version 1's store: one record `{ captureId, seq, t, value, flags }` per reading. */
export const READINGS_V1 = 'readings';
/** Version 2's store: one record per chunk (what one `put` was handed), see {@link Chunk}. */
export const CHUNKS = 'chunks';
const BY_LAST = 'byLast';
/** Readings per chunk when version 1's records are converted. */
const CONVERT_CHUNK = 1_000;

/**
 * A run of one capture's pending readings in ascending seq, as columns. The key is
 * (captureId, first); the index `byLast` is (captureId, last). Chunks of a capture never overlap
 * (a `put` that reaches into existing chunks merges them), so their order by `first` is their
 * order by `last` and by seq.
 */
export interface Chunk {
  captureId: number;
  first: number;
  last: number;
  seq: Float64Array;
  t: Float64Array;
  value: Float64Array;
  flags: Float64Array;
}

interface RowV1 extends ReadingIn {
  captureId: number;
}

function req<T>(r: IDBRequest<T>): Promise<T> {
  return new Promise((resolve, reject) => {
    r.onsuccess = () => resolve(r.result);
    r.onerror = () => reject(r.error);
  });
}

function done(tx: IDBTransaction): Promise<void> {
  return new Promise((resolve, reject) => {
    tx.oncomplete = () => resolve();
    tx.onerror = () => reject(tx.error);
    tx.onabort = () => reject(tx.error ?? new Error('browser storage transaction aborted'));
  });
}

/**
 * Walks a cursor to its end or until `visit` returns false; resolves when it stopped.
 * Writes made in `visit` or after it belong to the same transaction.
 */
function walk<C extends IDBCursor>(
  r: IDBRequest<C | null>,
  visit: (c: C) => boolean,
): Promise<void> {
  return new Promise((resolve, reject) => {
    r.onerror = () => reject(r.error);
    r.onsuccess = () => {
      const c = r.result;
      if (!c || !visit(c)) resolve();
      else c.continue();
    };
  });
}

/** A chunk of readings sorted by seq, without two of the same seq (the later one kept). */
export function chunkOf(captureId: number, readings: readonly ReadingIn[]): Chunk {
  const bySeq = new Map<number, ReadingIn>();
  let sorted = true;
  for (let i = 0; i < readings.length; i++) {
    const r = readings[i];
    if (i > 0 && r.seq <= readings[i - 1].seq) sorted = false;
    bySeq.set(r.seq, r);
  }
  const list = sorted ? readings : [...bySeq.values()].sort((a, b) => a.seq - b.seq);
  const n = list.length;
  const c: Chunk = {
    captureId,
    first: list[0].seq,
    last: list[n - 1].seq,
    seq: new Float64Array(n),
    t: new Float64Array(n),
    value: new Float64Array(n),
    flags: new Float64Array(n),
  };
  for (let i = 0; i < n; i++) {
    const r = list[i];
    c.seq[i] = r.seq;
    c.t[i] = r.t;
    c.value[i] = r.value;
    c.flags[i] = r.flags ?? 0;
  }
  return c;
}

function readingAt(c: Chunk, i: number): ReadingIn {
  return { seq: c.seq[i], t: c.t[i], value: c.value[i], flags: c.flags[i] };
}

function readingsOf(c: Chunk): ReadingIn[] {
  return Array.from({ length: c.seq.length }, (_, i) => readingAt(c, i));
}

/** Chunks of a capture whose last seq is at or above `from` (after `from` when `open`). */
const lastFrom = (captureId: number, from: number, open = false) =>
  IDBKeyRange.bound([captureId, from], [captureId, Infinity], open);

/**
 * Version 1 → 2: every per-reading record becomes part of a chunk of up to {@link CONVERT_CHUNK}
 * readings of its capture, in the upgrade's own transaction (a failure leaves version 1 intact).
 */
function convertV1(tx: IDBTransaction, chunks: IDBObjectStore): void {
  const old = tx.objectStore(READINGS_V1);
  const all = old.getAll();
  all.onsuccess = () => {
    const rows = all.result as RowV1[]; // in key order: by capture, then seq
    let run: ReadingIn[] = [];
    let cid = NaN;
    const flush = () => {
      if (run.length) chunks.put(chunkOf(cid, run));
      run = [];
    };
    for (const r of rows) {
      if (r.captureId !== cid || run.length >= CONVERT_CHUNK) {
        flush();
        cid = r.captureId;
      }
      run.push({ seq: r.seq, t: r.t, value: r.value, flags: r.flags ?? 0 });
    }
    flush();
    tx.db.deleteObjectStore(READINGS_V1);
  };
}

/**
 * Unacknowledged readings kept in IndexedDB, so a reload or crash loses nothing. One record per
 * chunk of readings handed over together (a put), not per reading: at 1,000 readings/s that is a
 * few writes a second instead of a thousand. Clearing acknowledged seqs deletes whole chunks and
 * rewrites a chunk acknowledged in part. A browser that kept readings one per record (version 1)
 * has them converted to chunks when it first opens version 2.
 */
export class IndexedDbPendingStore implements PendingStore {
  private db: Promise<IDBDatabase>;

  constructor(name = DB_NAME) {
    const open = indexedDB.open(name, DB_VERSION);
    open.onupgradeneeded = (e) => {
      const db = open.result;
      const chunks = db.createObjectStore(CHUNKS, { keyPath: ['captureId', 'first'] });
      chunks.createIndex(BY_LAST, ['captureId', 'last'], { unique: true });
      if (e.oldVersion >= 1 && db.objectStoreNames.contains(READINGS_V1))
        convertV1(open.transaction!, chunks);
    };
    this.db = new Promise((resolve, reject) => {
      open.onsuccess = () => {
        const db = open.result;
        // A newer version opened in another tab: let it upgrade (this tab's next call fails
        // and the uploader keeps its readings in memory).
        db.onversionchange = () => db.close();
        resolve(db);
      };
      open.onerror = () => reject(open.error);
      open.onblocked = () =>
        reject(
          new Error(
            'Browser storage is held open by an older Driftbench tab; close it and reload to keep readings across a reload.',
          ),
        );
    });
  }

  async put(captureId: number, readings: ReadingIn[]) {
    if (readings.length === 0) return;
    const fresh = chunkOf(captureId, readings);
    const tx = (await this.db).transaction(CHUNKS, 'readwrite');
    const store = tx.objectStore(CHUNKS);
    // Chunks that reach into this one's seq range (a resend, or a reading stored again) are
    // merged with it, the new readings winning: chunks never overlap.
    const overlapping: Chunk[] = [];
    await walk(store.index(BY_LAST).openCursor(lastFrom(captureId, fresh.first)), (c) => {
      const chunk = c.value as Chunk;
      if (chunk.first > fresh.last) return false;
      overlapping.push(chunk);
      return true;
    });
    if (overlapping.length === 0) store.put(fresh);
    else {
      const merged = new Map<number, ReadingIn>();
      for (const chunk of overlapping) {
        for (let i = 0; i < chunk.seq.length; i++) merged.set(chunk.seq[i], readingAt(chunk, i));
        store.delete([captureId, chunk.first]);
      }
      for (let i = 0; i < fresh.seq.length; i++) merged.set(fresh.seq[i], readingAt(fresh, i));
      store.put(chunkOf(captureId, [...merged.values()]));
    }
    await done(tx);
  }

  async take(captureId: number, limit: number, afterSeq?: number) {
    const tx = (await this.db).transaction(CHUNKS, 'readonly');
    const after = afterSeq ?? -Infinity;
    const out: ReadingIn[] = [];
    if (limit <= 0) return out;
    await walk(
      tx
        .objectStore(CHUNKS)
        .index(BY_LAST)
        .openCursor(lastFrom(captureId, after, true)),
      (c) => {
        const chunk = c.value as Chunk;
        for (let i = 0; i < chunk.seq.length && out.length < limit; i++)
          if (chunk.seq[i] > after) out.push(readingAt(chunk, i));
        return out.length < limit;
      },
    );
    return out;
  }

  async remove(captureId: number, seqs: number[]) {
    if (seqs.length === 0) return;
    const gone = new Set(seqs);
    let lo = Infinity;
    let hi = -Infinity;
    for (const s of gone) {
      if (s < lo) lo = s;
      if (s > hi) hi = s;
    }
    const tx = (await this.db).transaction(CHUNKS, 'readwrite');
    const store = tx.objectStore(CHUNKS);
    const partial = new Map<number, Chunk>();
    if (hi - lo + 1 === gone.size) {
      // A run of seqs (an acknowledged batch, as a rule): the chunks inside it are deleted as one
      // key range; only the (at most two) chunks reaching past its ends are read and rewritten.
      const low = (await req(store.index(BY_LAST).get(lastFrom(captureId, lo)))) as
        Chunk | undefined;
      const below = await req(
        store.openCursor(IDBKeyRange.bound([captureId, -Infinity], [captureId, hi]), 'prev'),
      );
      const high = below?.value as Chunk | undefined;
      if (low && low.first < lo && low.first <= hi) partial.set(low.first, low);
      const highPast = !!high && high.last > hi && high.last >= lo;
      if (high && highPast) partial.set(high.first, high);
      if (!highPast) store.delete(IDBKeyRange.bound([captureId, lo], [captureId, hi]));
      else if (high!.first > lo)
        store.delete(IDBKeyRange.bound([captureId, lo], [captureId, high!.first], false, true));
    } else {
      await walk(store.index(BY_LAST).openCursor(lastFrom(captureId, lo)), (c) => {
        const chunk = c.value as Chunk;
        if (chunk.first > hi) return false;
        partial.set(chunk.first, chunk);
        return true;
      });
    }
    for (const chunk of partial.values()) {
      const kept = readingsOf(chunk).filter((r) => !gone.has(r.seq));
      if (kept.length === chunk.seq.length) continue;
      store.delete([captureId, chunk.first]);
      if (kept.length) store.put(chunkOf(captureId, kept));
    }
    await done(tx);
  }

  async count(captureId: number) {
    const tx = (await this.db).transaction(CHUNKS, 'readonly');
    let n = 0;
    await walk(
      tx
        .objectStore(CHUNKS)
        .openCursor(IDBKeyRange.bound([captureId, -Infinity], [captureId, Infinity])),
      (c) => {
        n += (c.value as Chunk).seq.length;
        return true;
      },
    );
    return n;
  }

  async captures() {
    const tx = (await this.db).transaction(CHUNKS, 'readonly');
    const keys = (await req(tx.objectStore(CHUNKS).getAllKeys())) as Array<[number, number]>;
    return [...new Set(keys.map((k) => k[0]))];
  }

  /** Closes the connection (tests and benches that open several stores). */
  async close(): Promise<void> {
    (await this.db).close();
  }
}
