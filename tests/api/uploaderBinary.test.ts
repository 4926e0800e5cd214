import http from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { configureHttp } from '../../src/api/http.js';
import { isPermanentRefusal, postReadings, refusedReadingIndex } from '../../src/api/readings.js';
import { MemoryPendingStore, ReadingUploader } from '../../src/api/uploader.js';
import { READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';

// Issue 15: the bench's own upload code — ReadingUploader, postReadings and http.ts, wired as
// useLiveCapture wires them — against the real app on a real HTTP port and a real PostgreSQL.
// Only the origin is added to the client's relative paths (Node's fetch needs an absolute URL).
// Captures of 1 ms gates, opened by the technician whose token the client code sends.
const demo = useDemoApp({ gateTime: 0.001 });
let server: http.Server;
let base = '';
let token = '';
/** Content types of the readings requests the client code sent. */
const sentTypes: string[] = [];
const realFetch = globalThis.fetch;

beforeAll(async () => {
  server = http.createServer(demo.t.app);
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
  token = await demo.t.tokenFor('technician');
  configureHttp({ getToken: () => token });
  globalThis.fetch = (input, init) => {
    const url = String(input);
    if (url.endsWith('/readings'))
      sentTypes.push(new Headers(init?.headers).get('content-type') ?? '');
    return realFetch(url.startsWith('/') ? base + url : input, init);
  };
});
afterAll(async () => {
  globalThis.fetch = realFetch;
  configureHttp({ getToken: () => null });
  await new Promise((resolve) => server.close(resolve));
});

const { newCapture } = demo;

describe('the bench uploader against the real server', () => {
  it('posts pipelined binary batches and every reading arrives once, in order', async () => {
    const id = await newCapture();
    sentTypes.length = 0;
    const states: number[] = [];
    const u = new ReadingUploader(id, {
      store: new MemoryPendingStore(),
      send: (cid, r, signal, encoding) => postReadings(cid, r, { signal, encoding }),
      isPermanent: isPermanentRefusal,
      refusedReading: refusedReadingIndex,
      batchSize: 500,
      flushMs: 5,
      onState: (s) => states.push(s.inFlight ?? 0),
    });
    // 20 000 readings as a 1,000/s bench hands them over (one chunk per 100 ms of capture).
    const total = 20_000;
    const value = (seq: number) => 16e6 + Math.sin(seq / 50) * 0.01 + seq * 1e-9;
    for (let seq = 0; seq < total; seq += 100)
      await u.add(
        Array.from({ length: 100 }, (_, i) => ({
          seq: seq + i,
          t: (seq + i) * 0.001,
          value: value(seq + i),
        })),
      );
    await u.drained();

    expect(u.snapshot()).toMatchObject({
      pending: 0,
      sent: total,
      duplicates: 0,
      failures: 0,
      encoding: 'f64',
    });
    expect(sentTypes.length).toBeGreaterThanOrEqual(total / 500);
    expect(sentTypes.every((ct) => ct === READINGS_F64_TYPE)).toBe(true);
    expect(Math.max(...states)).toBeGreaterThan(1); // batches really overlapped

    const rows = await demo.t.db.pool.query<{ seq: number; t: number; value: number }>(
      'SELECT seq, t, value FROM readings WHERE capture_id = $1 ORDER BY seq',
      [id],
    );
    expect(rows.rows.length).toBe(total);
    // Every seq once, and the doubles bit for bit as the bench had them.
    expect(
      rows.rows.every((r, i) => r.seq === i && r.t === i * 0.001 && r.value === value(i)),
    ).toBe(true);
    const capture = await request(demo.t.app)
      .get(`/api/captures/${id}`)
      .set('authorization', `Bearer ${token}`);
    expect(capture.body).toMatchObject({ readingCount: total, highestSeq: total - 1 });
  });

  it('resending readings the server already holds duplicates nothing', async () => {
    const id = await newCapture();
    const readings = Array.from({ length: 300 }, (_, i) => ({ seq: i, t: i * 0.001, value: 16e6 }));
    const first = await postReadings(id, readings.slice(0, 200), { encoding: 'f64' });
    expect(first).toMatchObject({ accepted: 200, duplicates: 0 });
    // A reload's backlog: overlaps what was stored (its answer was lost) and goes on past it.
    const u = new ReadingUploader(id, {
      store: new MemoryPendingStore(),
      send: (cid, r, signal, encoding) => postReadings(cid, r, { signal, encoding }),
      batchSize: 50,
      flushMs: 1,
    });
    await u.add(readings.slice(150));
    await u.drained();
    expect(u.snapshot()).toMatchObject({ pending: 0, sent: 100, duplicates: 50 });
    const n = await demo.t.db.pool.query(
      'SELECT count(*)::int AS n, count(DISTINCT seq)::int AS d FROM readings WHERE capture_id = $1',
      [id],
    );
    expect(n.rows[0]).toEqual({ n: 300, d: 300 });
  });
});
