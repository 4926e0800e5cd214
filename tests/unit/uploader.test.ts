import { afterEach, describe, expect, it, vi } from 'vitest';
import {
  MemoryPendingStore,
  ReadingUploader,
  type PendingStore,
  type UploaderState,
} from '../../src/api/uploader.js';
import { isPermanentRefusal, postReadings, refusedReadingIndex } from '../../src/api/readings.js';
import type { IngestResult, ReadingIn } from '../../shared/protocol/captures.js';
import { decodeReadingsF64, READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';
import { mulberry32 } from '../helpers/random.js';

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

  it('counts readings as pending from the moment they are handed over', async () => {
    const server = fakeServer();
    const u = new ReadingUploader(1, { store: new SlowStore(), send: server.send, flushMs: 1 });
    const adding = u.add(batch(0, 5));
    // The store write takes 20 ms; the footer's "waiting" must not drop them meanwhile.
    expect(u.snapshot().pending).toBe(5);
    await adding;
    await u.drained();
    expect(u.snapshot()).toMatchObject({ pending: 0, sent: 5 });
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
  override async take(captureId: number, limit: number, afterSeq?: number) {
    this.trip('take');
    return super.take(captureId, limit, afterSeq);
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

// Issue 15: pipelined batches in the compact binary body. The uploader below is wired exactly as
// the bench wires it (postReadings through http.ts, isPermanentRefusal, refusedReadingIndex); only
// `fetch` is a fake: a server that decodes the body as the real one does, stores by seq
// idempotently, and answers each request after a delay of the test's choosing — so answers
// arrive out of order, a middle batch can fail or hang, and the binary body can be refused.

/** What the fake server was asked, one entry per request, in the order requests arrived. */
interface Request {
  n: number;
  type: string;
  seqs: number[];
}

interface Plan {
  /** How long request n waits before answering (ms); Infinity: never (a half-open connection). */
  delay?: (n: number) => number;
  /** An HTTP status other than 200 for request n (null: store and answer 200). */
  status?: (n: number, req: Request) => number | null;
  /** Answer 415 to the binary body (a server from before it existed). */
  noBinary?: boolean;
  /** A reading the server refuses as malformed (400 naming its index, as the real one does). */
  badSeq?: number;
}

function fakeFetchServer(plan: Plan = {}) {
  const stored = new Map<number, ReadingIn>();
  const requests: Request[] = [];
  let accepted = 0;
  let open = 0;
  let mostOpen = 0;
  const answer = (status: number, body: unknown) =>
    new Response(JSON.stringify(body), {
      status,
      headers: { 'content-type': 'application/json' },
    });
  const fetch = async (url: string | URL | Request, init?: RequestInit): Promise<Response> => {
    const type = new Headers(init?.headers).get('content-type') ?? '';
    expect(String(url)).toMatch(/^\/api\/captures\/1\/readings$/);
    let readings: ReadingIn[];
    if (type === READINGS_F64_TYPE) {
      const cols = decodeReadingsF64(init!.body as Uint8Array);
      if ('reason' in cols) throw new Error(cols.reason);
      readings = cols.seq.map((seq, i) => ({
        seq,
        t: cols.t[i],
        value: cols.value[i],
        flags: cols.flags[i],
      }));
    } else readings = (JSON.parse(String(init!.body)) as { readings: ReadingIn[] }).readings;
    const req: Request = { n: requests.length, type, seqs: readings.map((r) => r.seq) };
    requests.push(req);
    open++;
    mostOpen = Math.max(mostOpen, open);
    try {
      const wait = plan.delay?.(req.n) ?? 1;
      await new Promise<void>((resolve, reject) => {
        const signal = init?.signal;
        if (signal?.aborted) return reject(signal.reason);
        signal?.addEventListener('abort', () => reject(signal.reason));
        if (Number.isFinite(wait)) setTimeout(resolve, wait);
      });
      if (plan.noBinary && type === READINGS_F64_TYPE)
        return answer(415, { error: { code: 'unsupported-media-type', message: 'JSON only' } });
      const bad = plan.badSeq === undefined ? -1 : req.seqs.indexOf(plan.badSeq);
      if (bad >= 0) {
        const message = `readings[${bad}]: value must be a finite number`;
        return answer(400, { error: { code: 'validation', message, details: { index: bad } } });
      }
      const status = plan.status?.(req.n, req) ?? null;
      if (status !== null)
        return answer(status, { error: { code: 'server', message: `HTTP ${status}` } });
      let n = 0;
      for (const r of readings) if (!stored.has(r.seq) && stored.set(r.seq, r)) n++;
      accepted += n;
      return answer(200, {
        accepted: n,
        duplicates: readings.length - n,
        highestSeq: Math.max(-1, ...stored.keys()),
      });
    } finally {
      open--;
    }
  };
  return {
    stored,
    requests,
    fetch,
    get accepted() {
      return accepted;
    },
    get mostOpen() {
      return mostOpen;
    },
  };
}

/** A memory store whose contents a test can read synchronously (to check an invariant on every state). */
class PeekStore extends MemoryPendingStore {
  readonly rows = new Map<number, ReadingIn>();
  /** Every seq the store ever took (once there, it may leave only after the server has it). */
  readonly everStored = new Set<number>();
  override async put(captureId: number, readings: ReadingIn[]) {
    await super.put(captureId, readings);
    for (const r of readings) {
      this.rows.set(r.seq, r);
      this.everStored.add(r.seq);
    }
  }
  override async remove(captureId: number, seqs: number[]) {
    await super.remove(captureId, seqs);
    for (const s of seqs) this.rows.delete(s);
  }
}

/**
 * The bench's uploader on a fake fetch, with the loss-free invariant checked on every state it
 * reports: every reading the store took and the server does not hold is still in the store (so a later
 * batch's success never clears an earlier failed one, and a reload would still find it).
 */
/** Uploaders made by a test, closed after it (a failed test's uploader must not post into the next one's server). */
const made: ReadingUploader[] = [];

function benchUploader(
  server: ReturnType<typeof fakeFetchServer>,
  store: PeekStore,
  opts: { maxInFlight?: number; batchSize?: number; sendTimeoutMs?: number } = {},
) {
  vi.stubGlobal('fetch', server.fetch);
  const violations: string[] = [];
  const states: UploaderState[] = [];
  const u = new ReadingUploader(1, {
    store,
    send: (cid, r, signal, encoding) => postReadings(cid, r, { signal, encoding }),
    isPermanent: isPermanentRefusal,
    refusedReading: refusedReadingIndex,
    flushMs: 1,
    backoffMs: [2, 16],
    ...opts,
    onState: (s) => {
      states.push(s);
      for (const seq of store.everStored)
        if (!server.stored.has(seq) && !store.rows.has(seq))
          violations.push(`seq ${seq} left the store before the server stored it`);
    },
  });
  made.push(u);
  const add = async (readings: ReadingIn[]) => {
    await u.add(readings);
  };
  return { u, add, violations, states };
}

const readingsOf = (from: number, n: number): ReadingIn[] =>
  Array.from({ length: n }, (_, i) => ({
    seq: from + i,
    t: (from + i) * 0.001,
    value: 16e6 + ((from + i) % 7) * 1e-3,
  }));

/** True when every request's seqs are ascending and contiguous within what the batch holds. */
const ascending = (seqs: number[]) => seqs.every((s, i) => i === 0 || s > seqs[i - 1]);

describe('the bench uploader, pipelined and binary', () => {
  afterEach(() => {
    for (const u of made.splice(0)) u.close();
    vi.unstubAllGlobals();
  });

  it('keeps up to maxInFlight batches in flight, in the binary body, answered out of order', async () => {
    // Later requests answer first: request n waits 40, 25, 10, 40, 25, 10 … ms.
    const server = fakeFetchServer({ delay: (n) => [40, 25, 10][n % 3] });
    const store = new PeekStore();
    const { u, add, violations } = benchUploader(server, store, { maxInFlight: 3, batchSize: 50 });
    await add(readingsOf(0, 1000));
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(1000));
    expect(server.accepted).toBe(1000); // each reading stored once, none resent
    expect(server.mostOpen).toBe(3);
    expect(server.requests.every((r) => r.type === READINGS_F64_TYPE)).toBe(true);
    // Batches in flight never overlap, and each is in seq order.
    const all = server.requests.flatMap((r) => r.seqs);
    expect(new Set(all).size).toBe(all.length);
    expect(server.requests.every((r) => ascending(r.seqs))).toBe(true);
    expect(u.snapshot()).toMatchObject({
      pending: 0,
      sent: 1000,
      duplicates: 0,
      failures: 0,
      inFlight: 0,
      encoding: 'f64',
    });
    expect(store.rows.size).toBe(0);
    expect(violations).toEqual([]);
    // The decoded values are the ones added (the binary body loses nothing).
    expect(server.stored.get(999)).toEqual({ seq: 999, t: 0.999, value: 16e6 + 5e-3, flags: 0 });
  });

  it('with maxInFlight 1 sends one batch at a time', async () => {
    const server = fakeFetchServer({ delay: () => 3 });
    const { u, add } = benchUploader(server, new PeekStore(), { maxInFlight: 1, batchSize: 40 });
    await add(readingsOf(0, 200));
    await u.drained();
    expect(server.mostOpen).toBe(1);
    expect(server.requests.map((r) => r.seqs[0])).toEqual([0, 40, 80, 120, 160]);
  });

  it('keeps a failed middle batch while later ones succeed, then resends it', async () => {
    // Request 1 (the second batch) fails with 503 after the third and fourth have been stored.
    const server = fakeFetchServer({
      delay: (n) => (n === 1 ? 30 : 2),
      status: (n) => (n === 1 ? 503 : null),
    });
    const store = new PeekStore();
    const { u, add, violations, states } = benchUploader(server, store, {
      maxInFlight: 3,
      batchSize: 100,
    });
    await add(readingsOf(0, 400));
    await u.drained();
    const failed = server.requests[1].seqs;
    expect(failed).toEqual(range(200).slice(100));
    // Some state was reported while the later batches were stored but the failed one was not:
    // its readings were still pending then.
    expect(states.some((s) => s.failures === 1 && s.pending >= 100)).toBe(true);
    expect(seqs(server.stored)).toEqual(range(400));
    expect(server.accepted).toBe(400);
    // The failed batch went again, whole and in order.
    expect(server.requests.slice(2).some((r) => r.seqs[0] === 100)).toBe(true);
    expect(u.snapshot()).toMatchObject({ pending: 0, sent: 400, failures: 1, offline: false });
    expect(u.snapshot().lastError).toBeUndefined();
    expect(violations).toEqual([]);
  });

  it('gives up on a hung middle batch, aborts it and resends it, storing each reading once', async () => {
    const server = fakeFetchServer({ delay: (n) => (n === 1 ? Infinity : 3) });
    const store = new PeekStore();
    const { u, add, violations } = benchUploader(server, store, {
      maxInFlight: 3,
      batchSize: 60,
      sendTimeoutMs: 40,
    });
    await add(readingsOf(0, 300));
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(300));
    expect(server.accepted).toBe(300);
    expect(u.snapshot()).toMatchObject({ pending: 0, sent: 300, failures: 1 });
    expect(violations).toEqual([]);
  });

  it('falls back to JSON for good when the server answers 415 to the binary body', async () => {
    const server = fakeFetchServer({ noBinary: true, delay: (n) => [9, 3, 1][n % 3] });
    const store = new PeekStore();
    const { u, add, violations } = benchUploader(server, store, { maxInFlight: 3, batchSize: 50 });
    await add(readingsOf(0, 120));
    await add(readingsOf(120, 130));
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(250));
    expect(server.accepted).toBe(250);
    const binary = server.requests.filter((r) => r.type === READINGS_F64_TYPE);
    expect(binary.length).toBeGreaterThanOrEqual(1);
    expect(binary.length).toBeLessThanOrEqual(3); // only what was in flight when 415 came
    // Every request after the first JSON one is JSON.
    const firstJson = server.requests.findIndex((r) => r.type === 'application/json');
    expect(server.requests.slice(firstJson).every((r) => r.type === 'application/json')).toBe(true);
    expect(u.snapshot()).toMatchObject({ pending: 0, sent: 250, failures: 0, encoding: 'json' });
    expect(violations).toEqual([]);
  });

  it('drops only the reading a 400 names, even with batches in flight', async () => {
    const server = fakeFetchServer({ delay: (n) => [6, 2, 4][n % 3], badSeq: 77 });
    const store = new PeekStore();
    const { u, add, violations } = benchUploader(server, store, { maxInFlight: 3, batchSize: 30 });
    await add(readingsOf(0, 150));
    await u.drained();
    expect(seqs(server.stored)).toEqual(range(150).filter((s) => s !== 77));
    expect(u.snapshot()).toMatchObject({ pending: 0, refused: 1, sent: 149 });
    expect(u.snapshot().stopped).toBeUndefined();
    expect(u.snapshot().refusedReason).toContain('finite');
    expect(violations.filter((v) => !v.startsWith('seq 77 '))).toEqual([]);
  });

  it('leaves exactly the unacknowledged readings for a reload, and the next session sends them once', async () => {
    // Session 1: the server answers slowly, the third request fails; the tab is closed mid-way.
    const store = new PeekStore();
    const server = fakeFetchServer({
      delay: (n) => 5 + (n % 3) * 7,
      status: (n) => (n === 2 ? 502 : null),
    });
    const first = benchUploader(server, store, { maxInFlight: 3, batchSize: 25 });
    for (let i = 0; i < 8; i++) await first.add(readingsOf(i * 50, 50));
    await new Promise((r) => setTimeout(r, 20));
    first.u.close(); // the reload: this uploader sends nothing more
    await new Promise((r) => setTimeout(r, 60)); // answers of requests already sent still land
    // What the store keeps is exactly what the server does not hold, give or take the readings
    // whose answer had not come back when the tab closed (those the server holds twice at worst).
    for (const s of range(400)) expect(server.stored.has(s) || store.rows.has(s)).toBe(true);
    expect(store.rows.size).toBeGreaterThan(0);
    const before = server.stored.size;
    expect(before).toBeLessThan(400);

    // Session 2 resumes from the store alone.
    const second = benchUploader(server, store, { maxInFlight: 3, batchSize: 25 });
    await second.u.resume();
    await second.u.drained();
    expect(seqs(server.stored)).toEqual(range(400));
    expect(server.accepted).toBe(400);
    expect(first.u.snapshot().sent + second.u.snapshot().sent).toBe(400);
    expect(second.u.snapshot()).toMatchObject({ pending: 0 });
    expect(store.rows.size).toBe(0);
    expect(first.violations).toEqual([]);
  });

  it.each([1, 2, 3, 4, 5])(
    'stores every reading exactly once under random delays, failures and hangs (seed %i)',
    async (seed) => {
      const rnd = mulberry32(seed);
      const fate = new Map<number, number>();
      const roll = (n: number) => {
        if (!fate.has(n)) fate.set(n, rnd());
        return fate.get(n)!;
      };
      const server = fakeFetchServer({
        delay: (n) => (roll(n) > 0.95 ? Infinity : 1 + Math.floor(roll(n) * 20)),
        status: (n) => (roll(n) < 0.15 ? 503 : null),
      });
      const store = new PeekStore();
      const { u, add, violations, states } = benchUploader(server, store, {
        maxInFlight: 1 + (seed % 4),
        batchSize: 20 + seed * 7,
        sendTimeoutMs: 50,
      });
      let seq = 0;
      for (let i = 0; i < 30; i++) {
        const n = 1 + Math.floor(rnd() * 40);
        await add(readingsOf(seq, n));
        seq += n;
        if (rnd() < 0.3) await new Promise((r) => setTimeout(r, rnd() * 10));
      }
      await u.drained();
      expect(seqs(server.stored)).toEqual(range(seq));
      expect(server.accepted).toBe(seq);
      expect(u.snapshot()).toMatchObject({ pending: 0, sent: seq, inFlight: 0 });
      expect(store.rows.size).toBe(0);
      expect(violations).toEqual([]);
      // The counter the bench shows as synced never ran ahead of the server.
      for (const s of states) expect(s.sent).toBeLessThanOrEqual(server.accepted);
      // Every request was one ascending run of seqs.
      expect(server.requests.every((r) => ascending(r.seqs))).toBe(true);
    },
  );
});

describe('MemoryPendingStore', () => {
  it('takes the lowest pending readings above a seq, whatever order they were put in', async () => {
    // Common practice, no source: take answers in seq order, ascending puts or not.
    const r = (seq: number) => ({ seq, t: seq, value: seq });
    const store = new MemoryPendingStore();
    await store.put(1, [0, 1, 2, 3, 4, 5].map(r)); // ascending: read in insertion order
    expect((await store.take(1, 3, 1)).map((x) => x.seq)).toEqual([2, 3, 4]);
    await store.remove(1, [2]);
    await store.put(1, [2].map(r)); // put again below the highest: order must be restored
    await store.put(1, [9, 7].map(r));
    expect((await store.take(1, 4, 1)).map((x) => x.seq)).toEqual([2, 3, 4, 5]);
    expect((await store.take(1, 10)).map((x) => x.seq)).toEqual([0, 1, 2, 3, 4, 5, 7, 9]);
    await store.remove(1, [0, 1, 2, 3, 4, 5, 7, 9]);
    await store.put(1, [20, 21].map(r)); // empty again: ascending once more
    await store.put(1, [21, 22].map(r)); // a reading put twice keeps its place
    expect((await store.take(1, 10, 20)).map((x) => x.seq)).toEqual([21, 22]);
    expect(await store.count(1)).toBe(3);
  });
});
