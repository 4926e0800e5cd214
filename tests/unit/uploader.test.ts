import { describe, expect, it } from 'vitest';
import { MemoryPendingStore, ReadingUploader, type PendingStore } from '../../src/api/uploader.js';
import type { IngestResult, ReadingIn } from '../../shared/protocol/captures.js';

/** A fake server that keeps what it accepts by seq, like the real idempotent ingest. */
function fakeServer(opts: { failFirst?: number } = {}) {
  const stored = new Map<number, ReadingIn>();
  let failures = opts.failFirst ?? 0;
  const send = async (_id: number, readings: ReadingIn[]): Promise<IngestResult> => {
    await new Promise((r) => setTimeout(r, 1));
    if (failures > 0) {
      failures--;
      throw new Error('network down');
    }
    let accepted = 0;
    for (const r of readings) if (!stored.has(r.seq) && stored.set(r.seq, r)) accepted++;
    return {
      accepted,
      duplicates: readings.length - accepted,
      highestSeq: Math.max(-1, ...stored.keys()),
    };
  };
  return { stored, send };
}

/** A store whose writes take a while, as IndexedDB's do. */
class SlowStore extends MemoryPendingStore implements PendingStore {
  override async put(captureId: number, readings: ReadingIn[]) {
    await new Promise((r) => setTimeout(r, 20));
    await super.put(captureId, readings);
  }
}

const batch = (from: number, n: number) =>
  Array.from({ length: n }, (_, i) => ({ seq: from + i, t: from + i, value: 1 }));

describe('the bench uploader', () => {
  it('sends every reading once the network comes back', async () => {
    const server = fakeServer({ failFirst: 3 });
    const u = new ReadingUploader(1, {
      store: new MemoryPendingStore(),
      send: server.send,
      flushMs: 1,
      backoffMs: [2, 8],
      batchSize: 7,
    });
    for (let i = 0; i < 10; i++) await u.add(batch(i * 10, 10));
    await u.drained();
    expect([...server.stored.keys()].sort((a, b) => a - b)).toEqual(
      Array.from({ length: 100 }, (_, i) => i),
    );
    expect(u.snapshot()).toMatchObject({ pending: 0, failures: 3, sent: 100 });
  });

  it('waits in drained() for readings whose store write has not finished', async () => {
    const server = fakeServer();
    const u = new ReadingUploader(1, { store: new SlowStore(), send: server.send, flushMs: 1 });
    void u.add(batch(0, 5));
    void u.add(batch(5, 5));
    await u.drained();
    expect(server.stored.size).toBe(10);
  });

  it('stops on a refusal that retrying cannot mend, and says why', async () => {
    const u = new ReadingUploader(1, {
      store: new MemoryPendingStore(),
      send: async () => {
        throw new Error('HTTP 409 capture finished');
      },
      flushMs: 1,
      isPermanent: (err) => String(err).includes('409'),
    });
    await u.add(batch(0, 3));
    await u.drained();
    expect(u.snapshot().stopped).toContain('409');
    expect(u.snapshot().pending).toBe(3);
  });
});

/** A store whose chosen operations fail, a set number of times (Infinity: always). */
class FailingStore extends MemoryPendingStore implements PendingStore {
  fails: Partial<Record<'put' | 'take' | 'remove' | 'count', number>> = {};
  private trip(op: 'put' | 'take' | 'remove' | 'count') {
    const left = this.fails[op] ?? 0;
    if (left > 0) {
      this.fails[op] = left - 1;
      throw new Error(`${op}: QuotaExceededError`);
    }
  }
  override async put(captureId: number, readings: ReadingIn[]) {
    this.trip('put');
    await super.put(captureId, readings);
  }
  override async take(captureId: number, limit: number) {
    this.trip('take');
    return super.take(captureId, limit);
  }
  override async remove(captureId: number, seqs: number[]) {
    this.trip('remove');
    await super.remove(captureId, seqs);
  }
  override async count(captureId: number) {
    this.trip('count');
    return super.count(captureId);
  }
}

const seqs = (m: Map<number, ReadingIn>) => [...m.keys()].sort((a, b) => a - b);
const range = (n: number) => Array.from({ length: n }, (_, i) => i);

describe('the bench uploader when browser storage fails', () => {
  it('holds readings the store would not take in memory, sends them and counts them in drained()', async () => {
    const store = new FailingStore();
    store.fails.put = 1;
    const server = fakeServer({ failFirst: 2 });
    const states: Array<{ held: number; pending: number }> = [];
    const u = new ReadingUploader(1, {
      store,
      send: server.send,
      flushMs: 1,
      backoffMs: [2, 8],
      batchSize: 4,
      onState: (s) => states.push({ held: s.held, pending: s.pending }),
    });
    await u.add(batch(0, 5)); // the store refuses these
    await u.add(batch(5, 5));
    expect(u.snapshot()).toMatchObject({ held: 5, pending: 10, storeErrors: 1 });
    expect(u.snapshot().storeError).toContain('QuotaExceededError');
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(10));
    expect(u.snapshot()).toMatchObject({ held: 0, pending: 0, sent: 10, lost: 0 });
    expect(await store.count(1)).toBe(0);
    expect(states.some((s) => s.held === 5)).toBe(true);
  });

  it('does not resolve drained() while held readings are unacknowledged', async () => {
    const store = new FailingStore();
    store.fails.put = Infinity;
    let up = false;
    const got = new Set<number>();
    const u = new ReadingUploader(1, {
      store,
      send: async (_id, readings) => {
        if (!up) throw new Error('network down');
        for (const r of readings) got.add(r.seq);
        return { accepted: readings.length, duplicates: 0, highestSeq: 0 };
      },
      flushMs: 1,
      backoffMs: [2, 4],
    });
    await u.add(batch(0, 3));
    let drained = false;
    void u.drained().then(() => (drained = true));
    await new Promise((r) => setTimeout(r, 30));
    expect(drained).toBe(false);
    expect(u.snapshot()).toMatchObject({ held: 3, pending: 3 });
    up = true;
    await u.drained();
    expect([...got].sort()).toEqual([0, 1, 2]);
    expect(u.snapshot()).toMatchObject({ held: 0, pending: 0 });
  });

  it.each(['take', 'count', 'remove'] as const)(
    'backs off and retries when the store fails to %s',
    async (op) => {
      const store = new FailingStore();
      const server = fakeServer();
      const u = new ReadingUploader(1, {
        store,
        send: server.send,
        flushMs: 1,
        backoffMs: [2, 8],
        batchSize: 3,
      });
      await u.add(batch(0, 10));
      store.fails[op] = 2;
      await u.drained();
      expect(seqs(server.stored)).toEqual(range(10));
      expect(u.snapshot()).toMatchObject({ pending: 0, held: 0 });
      expect(u.snapshot().storeErrors).toBeGreaterThanOrEqual(1);
      expect(await store.count(1)).toBe(0);
    },
  );

  it('sends held readings even when the store can no longer be read at all', async () => {
    const store = new FailingStore();
    store.fails = { put: Infinity, take: Infinity, remove: Infinity, count: Infinity };
    const server = fakeServer();
    const u = new ReadingUploader(1, {
      store,
      send: server.send,
      flushMs: 1,
      backoffMs: [2, 8],
      batchSize: 4,
    });
    await u.add(batch(0, 9));
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(9));
    expect(u.snapshot()).toMatchObject({ pending: 0, held: 0 });
  });

  it('resume() survives a store that cannot count', async () => {
    const store = new FailingStore();
    await store.put(1, batch(0, 4));
    store.fails.count = 1;
    const server = fakeServer();
    const u = new ReadingUploader(1, { store, send: server.send, flushMs: 1, backoffMs: [2, 8] });
    await u.resume();
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(4));
  });
});

describe('the bench uploader against a hung or picky server', () => {
  it('gives up on a send that never answers, aborts it and retries', async () => {
    const server = fakeServer();
    const signals: AbortSignal[] = [];
    let calls = 0;
    const u = new ReadingUploader(1, {
      store: new MemoryPendingStore(),
      send: (id, readings, signal) => {
        signals.push(signal!);
        if (calls++ === 0) return new Promise<never>(() => {}); // a half-open connection
        return server.send(id, readings);
      },
      flushMs: 1,
      backoffMs: [2, 8],
      sendTimeoutMs: 20,
    });
    await u.add(batch(0, 5));
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(5));
    expect(signals[0].aborted).toBe(true);
    expect(u.snapshot()).toMatchObject({ failures: 1, pending: 0 });
    expect(u.snapshot().lastError).toBeUndefined();
  });

  it('drops only the reading a refusal names and sends the rest', async () => {
    const server = fakeServer();
    class Refusal extends Error {
      constructor(readonly index: number) {
        super(`readings[${index}]: value must be a finite number`);
      }
    }
    const u = new ReadingUploader(1, {
      store: new MemoryPendingStore(),
      send: async (id, readings) => {
        const bad = readings.findIndex((r) => !Number.isFinite(r.value));
        if (bad >= 0) throw new Refusal(bad);
        return server.send(id, readings);
      },
      flushMs: 1,
      batchSize: 4,
      isPermanent: (err) => err instanceof Refusal,
      refusedReading: (err) => (err instanceof Refusal ? err.index : null),
    });
    const readings = batch(0, 10);
    readings[2].value = NaN;
    readings[7].value = Infinity;
    await u.add(readings);
    await u.drained();
    expect(seqs(server.stored)).toEqual([0, 1, 3, 4, 5, 6, 8, 9]);
    expect(u.snapshot()).toMatchObject({ refused: 2, pending: 0 });
    expect(u.snapshot().stopped).toBeUndefined();
    expect(u.snapshot().refusedReason).toContain('finite');
  });
});
