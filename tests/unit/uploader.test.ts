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
    return { accepted, duplicates: readings.length - accepted, highestSeq: Math.max(-1, ...stored.keys()) };
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

const batch = (from: number, n: number) => Array.from({ length: n }, (_, i) => ({ seq: from + i, t: from + i, value: 1 }));

describe('the bench uploader', () => {
  it('sends every reading once the network comes back', async () => {
    const server = fakeServer({ failFirst: 3 });
    const u = new ReadingUploader(1, { store: new MemoryPendingStore(), send: server.send, flushMs: 1, backoffMs: [2, 8], batchSize: 7 });
    for (let i = 0; i < 10; i++) await u.add(batch(i * 10, 10));
    await u.drained();
    expect([...server.stored.keys()].sort((a, b) => a - b)).toEqual(Array.from({ length: 100 }, (_, i) => i));
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
