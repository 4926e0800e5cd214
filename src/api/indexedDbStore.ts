import type { ReadingIn } from '../../shared/protocol/captures';
import type { PendingStore } from './uploader';

const DB_NAME = 'driftbench-pending';
const STORE = 'readings';

interface Row extends ReadingIn {
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
    tx.onabort = () => reject(tx.error);
  });
}

const range = (captureId: number) =>
  IDBKeyRange.bound([captureId, 0], [captureId, Number.MAX_SAFE_INTEGER]);

/** Unacknowledged readings kept in IndexedDB, keyed by (captureId, seq), so a reload or crash loses nothing. */
export class IndexedDbPendingStore implements PendingStore {
  private db: Promise<IDBDatabase>;

  constructor() {
    const open = indexedDB.open(DB_NAME, 1);
    open.onupgradeneeded = () =>
      open.result.createObjectStore(STORE, { keyPath: ['captureId', 'seq'] });
    this.db = req(open);
  }

  async put(captureId: number, readings: ReadingIn[]) {
    const tx = (await this.db).transaction(STORE, 'readwrite');
    const s = tx.objectStore(STORE);
    for (const r of readings)
      s.put({ captureId, seq: r.seq, t: r.t, value: r.value, flags: r.flags ?? 0 } satisfies Row);
    await done(tx);
  }

  async take(captureId: number, limit: number, afterSeq?: number) {
    const tx = (await this.db).transaction(STORE, 'readonly');
    const keys =
      afterSeq === undefined
        ? range(captureId)
        : IDBKeyRange.bound([captureId, afterSeq], [captureId, Number.MAX_SAFE_INTEGER], true);
    const rows = (await req(tx.objectStore(STORE).getAll(keys, limit))) as Row[];
    return rows.map(({ seq, t, value, flags }) => ({ seq, t, value, flags }));
  }

  async remove(captureId: number, seqs: number[]) {
    if (seqs.length === 0) return;
    const tx = (await this.db).transaction(STORE, 'readwrite');
    const s = tx.objectStore(STORE);
    const sorted = [...seqs].sort((a, b) => a - b);
    // Contiguous runs are deleted as one key range.
    let start = sorted[0];
    let prev = start;
    const flush = (a: number, b: number) =>
      s.delete(IDBKeyRange.bound([captureId, a], [captureId, b]));
    for (let i = 1; i < sorted.length; i++) {
      if (sorted[i] !== prev + 1) {
        flush(start, prev);
        start = sorted[i];
      }
      prev = sorted[i];
    }
    flush(start, prev);
    await done(tx);
  }

  async count(captureId: number) {
    const tx = (await this.db).transaction(STORE, 'readonly');
    return req(tx.objectStore(STORE).count(range(captureId)));
  }

  async captures() {
    const tx = (await this.db).transaction(STORE, 'readonly');
    const keys = (await req(tx.objectStore(STORE).getAllKeys())) as Array<[number, number]>;
    return [...new Set(keys.map((k) => k[0]))];
  }
}
