import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { pino } from 'pino';
import WebSocket from 'ws';
import { startServer, type RunningServer } from '../../server/index.js';
import { createTestDatabase } from '../helpers/db.js';
import { TEST_JWT_SECRET } from '../helpers/app.js';
import { ServerMessage, type ReadingsRefused } from '../../shared/protocol/live.js';
import { socketProtocols } from '../../shared/protocol/socketAuth.js';
import {
  encodeUploadFrame,
  UPLOAD_HEADER_BYTES,
  UPLOAD_MAX_READINGS,
} from '../../shared/protocol/liveUpload.js';
import { encodeReadingsF64, READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';
import type { ReadingIn } from '../../shared/protocol/captures.js';
import { LiveSocket } from '../../src/api/socket.js';
import { readingsTransport } from '../../src/api/readingsTransport.js';
import { MemoryPendingStore, ReadingUploader, type SendBatch } from '../../src/api/uploader.js';
import { ApiError } from '../../src/api/http.js';
import { MAX_FRAME } from '../../server/ws/live.js';
import { MAX_UPLOADS_IN_FLIGHT } from '../../server/ws/uploads.js';
import { sharedSessionStats } from '../../server/services/auth.js';

// Readings uploaded as binary frames on the live socket (issue 15, shared/protocol/liveUpload.ts):
// a real server, real PostgreSQL, real `ws` sockets. Every refusal is compared with what the HTTP
// route answers for the same batch.

let server: RunningServer;
let drop: () => Promise<void>;
const tokens: Record<string, string> = {};
let dutId = 0;
let checkpointId = 0;

async function login(role: string): Promise<string> {
  const res = await fetch(`${server.url}/api/auth/login`, {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify({ email: `${role}@kestrelbay.example`, password: 'driftbench-demo' }),
  });
  return ((await res.json()) as { token: string }).token;
}

async function api(role: string, method: string, path: string, body?: unknown) {
  const res = await fetch(`${server.url}${path}`, {
    method,
    headers: { 'content-type': 'application/json', authorization: `Bearer ${tokens[role]}` },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  return { status: res.status, body: (await res.json()) as any };
}

/** The HTTP route's answer to the same batch in the binary body. */
async function postF64(role: string, captureId: number, readings: ReadingIn[]) {
  const res = await fetch(`${server.url}/api/captures/${captureId}/readings`, {
    method: 'POST',
    headers: { 'content-type': READINGS_F64_TYPE, authorization: `Bearer ${tokens[role]}` },
    body: encodeReadingsF64(readings),
  });
  return { status: res.status, body: (await res.json()) as any };
}

async function newCapture(role = 'technician'): Promise<number> {
  const res = await api(role, 'POST', '/api/captures', {
    dutId,
    checkpointId,
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
  });
  expect(res.status, JSON.stringify(res.body)).toBe(201);
  return res.body.id as number;
}

function readings(from: number, n: number): ReadingIn[] {
  return Array.from({ length: n }, (_, i) => ({
    seq: from + i,
    t: (from + i) * 0.01,
    value: 16e6 + ((from + i) % 7) * 1e-3,
  }));
}

/** A raw `ws` socket that records every message (each checked against the contract). */
async function rawSocket(role: string) {
  const ws = new WebSocket(`${server.url.replace('http', 'ws')}/ws`, socketProtocols(tokens[role]));
  const messages: ServerMessage[] = [];
  const waiters: Array<{
    match: (m: ServerMessage) => boolean;
    resolve: (m: ServerMessage) => void;
  }> = [];
  ws.on('message', (data) => {
    const msg = ServerMessage.parse(JSON.parse(String(data)));
    messages.push(msg);
    const i = waiters.findIndex((w) => w.match(msg));
    if (i >= 0) waiters.splice(i, 1)[0].resolve(msg);
  });
  const hello = new Promise<ServerMessage>((resolve) =>
    waiters.push({ match: (m) => m.type === 'hello', resolve }),
  );
  await new Promise((resolve, reject) => {
    ws.on('open', resolve);
    ws.on('error', reject);
  });
  await hello;
  return {
    ws,
    messages,
    /** The answer to request `id`. */
    answer(id: number) {
      const found = messages.find(
        (m) => (m.type === 'readings-ack' || m.type === 'readings-refused') && m.id === id,
      );
      if (found) return Promise.resolve(found);
      return new Promise<ServerMessage>((resolve) =>
        waiters.push({
          match: (m) => (m.type === 'readings-ack' || m.type === 'readings-refused') && m.id === id,
          resolve,
        }),
      );
    },
    next(type: string) {
      return new Promise<ServerMessage>((resolve) =>
        waiters.push({ match: (m) => m.type === type, resolve }),
      );
    },
  };
}

/** The product's client socket over `ws`, once the server said it takes uploads. */
async function clientSocket(role: string): Promise<LiveSocket> {
  const socket = new LiveSocket({
    getToken: () => tokens[role],
    url: `${server.url.replace('http', 'ws')}/ws`,
    WebSocket: WebSocket as unknown as typeof globalThis.WebSocket,
    backoffMs: [50, 200],
  });
  for (let i = 0; i < 200 && !socket.canUpload(1); i++) await new Promise((r) => setTimeout(r, 10));
  expect(socket.canUpload(1)).toBe(true);
  return socket;
}

async function stored(captureId: number) {
  const res = await server.db.pool.query<{ n: number; d: number; lo: number; hi: number }>(
    'SELECT count(*)::int AS n, count(DISTINCT seq)::int AS d, min(seq) AS lo, max(seq) AS hi FROM readings WHERE capture_id = $1',
    [captureId],
  );
  return res.rows[0];
}

function refusalOf(m: ServerMessage) {
  expect(m.type).toBe('readings-refused');
  const r = m as ReadingsRefused;
  return { status: r.status, code: r.code, message: r.message };
}

beforeAll(async () => {
  const db = await createTestDatabase();
  drop = db.drop;
  server = await startServer({
    databaseUrl: db.url,
    jwtSecret: TEST_JWT_SECRET,
    demo: true,
    simulators: false,
    log: pino({ level: 'silent' }),
  });
  for (const role of ['technician', 'engineer', 'viewer', 'lead', 'admin'])
    tokens[role] = await login(role);
  const studies = await api('engineer', 'GET', '/api/studies');
  const study = await api('engineer', 'GET', `/api/studies/${studies.body.studies[0].id}`);
  dutId = study.body.duts.find((d: { label: string }) => d.label.startsWith('Y1')).id;
  checkpointId = study.body.checkpoints[0].id;
});
afterAll(async () => {
  await server?.close();
  await drop?.();
});

describe('readings uploaded on the live socket', () => {
  it('says in its hello that it takes uploads, acks each batch with the IngestResult and stores it once', async () => {
    const peer = await rawSocket('technician');
    const hello = peer.messages.find((m) => m.type === 'hello');
    expect(hello).toMatchObject({ uploads: { maxReadings: UPLOAD_MAX_READINGS } });
    const id = await newCapture();
    peer.ws.send(encodeUploadFrame(1, id, readings(0, 50)));
    expect(await peer.answer(1)).toEqual({
      type: 'readings-ack',
      id: 1,
      captureId: id,
      accepted: 50,
      duplicates: 0,
      highestSeq: 49,
    });
    // The same batch again, and one overlapping it: only new seqs are stored.
    peer.ws.send(encodeUploadFrame(2, id, readings(0, 50)));
    peer.ws.send(encodeUploadFrame(3, id, readings(40, 20)));
    expect(await peer.answer(2)).toMatchObject({ accepted: 0, duplicates: 50, highestSeq: 49 });
    expect(await peer.answer(3)).toMatchObject({ accepted: 10, duplicates: 10, highestSeq: 59 });
    // A long batch takes the COPY path of the ingest, through the same call.
    peer.ws.send(encodeUploadFrame(4, id, readings(60, 2000)));
    expect(await peer.answer(4)).toMatchObject({ accepted: 2000, duplicates: 0, highestSeq: 2059 });
    expect(await stored(id)).toEqual({ n: 2060, d: 2060, lo: 0, hi: 2059 });
    const capture = await api('technician', 'GET', `/api/captures/${id}`);
    expect(capture.body).toMatchObject({ readingCount: 2060, highestSeq: 2059 });
    peer.ws.close();
  });

  it('refuses what the HTTP route refuses, with the same status, code and message', async () => {
    const own = await newCapture('technician');
    const others = await newCapture('engineer');
    const finished = await newCapture('technician');
    expect((await postF64('technician', finished, readings(0, 5))).status).toBe(200);
    expect((await api('technician', 'POST', `/api/captures/${finished}/finish`)).status).toBe(200);

    const cases: Array<{ role: string; captureId: number; batch: ReadingIn[]; status: number }> = [
      // A viewer may not add readings at all.
      { role: 'viewer', captureId: own, batch: readings(0, 3), status: 403 },
      // A technician may not add readings to another operator's capture.
      { role: 'technician', captureId: others, batch: readings(0, 3), status: 403 },
      // A finished capture takes no more readings.
      { role: 'technician', captureId: finished, batch: readings(5, 3), status: 409 },
      // No such capture.
      { role: 'technician', captureId: 2_000_000_000, batch: readings(0, 3), status: 404 },
      // A capture id the route's parameter check refuses.
      { role: 'technician', captureId: 0, batch: readings(0, 3), status: 400 },
      // A bad reading: the route names its index.
      {
        role: 'technician',
        captureId: own,
        batch: [...readings(0, 2), { seq: 2, t: Number.NaN, value: 1 }],
        status: 400,
      },
    ];
    let n = 10;
    for (const c of cases) {
      const peer = await rawSocket(c.role);
      const id = n++;
      peer.ws.send(encodeUploadFrame(id, c.captureId, c.batch));
      const answer = (await peer.answer(id)) as ReadingsRefused;
      const http = await postF64(c.role, c.captureId, c.batch);
      expect(http.status).toBe(c.status);
      expect(refusalOf(answer)).toEqual({
        status: http.status,
        code: http.body.error.code,
        message: http.body.error.message,
      });
      expect(answer.captureId).toBe(c.captureId);
      if (http.body.error.details && !Array.isArray(http.body.error.details))
        expect(answer.details).toEqual(http.body.error.details);
      peer.ws.close();
    }
    expect(await stored(own)).toMatchObject({ n: 0 });
    expect(await stored(others)).toMatchObject({ n: 0 });
    expect(await stored(finished)).toMatchObject({ n: 5 });
  });

  it('refuses readings into a locked study with 409 study-locked, as the route does', async () => {
    const id = await newCapture();
    const studyId = (
      await server.db.pool.query<{ id: number }>(
        'SELECT d.study_id AS id FROM captures c JOIN duts d ON d.id = c.dut_id WHERE c.id = $1',
        [id],
      )
    ).rows[0].id;
    const before = await server.db.pool.query<{ status: string }>(
      'SELECT status FROM studies WHERE id = $1',
      [studyId],
    );
    await server.db.pool.query(`UPDATE studies SET status = 'in-review' WHERE id = $1`, [studyId]);
    try {
      const peer = await rawSocket('technician');
      peer.ws.send(encodeUploadFrame(7, id, readings(0, 3)));
      const answer = refusalOf(await peer.answer(7));
      const http = await postF64('technician', id, readings(0, 3));
      expect(answer).toEqual({
        status: 409,
        code: 'study-locked',
        message: http.body.error.message,
      });
      expect(http.body.error.code).toBe('study-locked');
      peer.ws.close();
    } finally {
      await server.db.pool.query('UPDATE studies SET status = $2 WHERE id = $1', [
        studyId,
        before.rows[0].status,
      ]);
    }
  });

  it('refuses frames it cannot read, clearly, and keeps the socket for the next', async () => {
    const id = await newCapture();
    const peer = await rawSocket('technician');
    // An unknown frame version: 415, as the route answers a body it does not take.
    const v2 = encodeUploadFrame(20, id, readings(0, 2));
    v2[1] = 2;
    peer.ws.send(v2);
    expect(refusalOf(await peer.answer(20))).toMatchObject({
      status: 415,
      code: 'unsupported-frame',
    });
    // A frame whose length disagrees with its header.
    const cut = encodeUploadFrame(21, id, readings(0, 2)).subarray(0, UPLOAD_HEADER_BYTES + 40);
    peer.ws.send(cut);
    expect(refusalOf(await peer.answer(21))).toMatchObject({ status: 400, code: 'bad-frame' });
    // Shorter than a request id: an error, the socket stays.
    const error = peer.next('error');
    peer.ws.send(Buffer.from([1, 1, 16]));
    expect(await error).toMatchObject({ type: 'error', code: 'bad-frame' });
    // More readings than a batch may hold: 413 naming the limit.
    peer.ws.send(encodeUploadFrame(22, id, readings(0, UPLOAD_MAX_READINGS + 1)));
    const big = refusalOf(await peer.answer(22));
    expect(big).toMatchObject({ status: 413, code: 'too-large' });
    expect(big.message).toContain('20,000');
    // Still open and still taking readings.
    peer.ws.send(encodeUploadFrame(23, id, readings(0, 2)));
    expect(await peer.answer(23)).toMatchObject({ type: 'readings-ack', accepted: 2 });
    // A frame beyond the socket's size limit ends the socket (1009, message too big).
    const closed = new Promise<number>((resolve) => peer.ws.on('close', (code) => resolve(code)));
    peer.ws.send(Buffer.alloc(MAX_FRAME + 1));
    expect(await closed).toBe(1009);
    expect(await stored(id)).toMatchObject({ n: 2 });
  });

  it('holds a socket to eight frames awaiting their answer and refuses a ninth with 429 until one is answered', async () => {
    const id = await newCapture();
    const peer = await rawSocket('technician');
    // Hold the capture's row so the eight ingests wait inside PostgreSQL.
    const holder = await server.db.pool.connect();
    try {
      await holder.query('BEGIN');
      await holder.query('SELECT 1 FROM captures WHERE id = $1 FOR UPDATE', [id]);
      for (let k = 0; k < MAX_UPLOADS_IN_FLIGHT; k++)
        peer.ws.send(encodeUploadFrame(100 + k, id, readings(k * 10, 10)));
      peer.ws.send(encodeUploadFrame(200, id, readings(80, 10)));
      expect(refusalOf(await peer.answer(200))).toMatchObject({
        status: 429,
        code: 'too-many-in-flight',
      });
    } finally {
      await holder.query('ROLLBACK');
      holder.release();
    }
    for (let k = 0; k < MAX_UPLOADS_IN_FLIGHT; k++)
      expect(await peer.answer(100 + k)).toMatchObject({ type: 'readings-ack', accepted: 10 });
    peer.ws.send(encodeUploadFrame(201, id, readings(80, 10)));
    expect(await peer.answer(201)).toMatchObject({ type: 'readings-ack', accepted: 10 });
    expect(await stored(id)).toEqual({ n: 90, d: 90, lo: 0, hi: 89 });
    peer.ws.close();
  });

  it('delivers uploaded readings to watchers once each', async () => {
    const id = await newCapture();
    const watcher = await rawSocket('viewer');
    watcher.ws.send(JSON.stringify({ type: 'watch', captureId: id }));
    await new Promise((r) => setTimeout(r, 100));
    const peer = await rawSocket('technician');
    peer.ws.send(encodeUploadFrame(1, id, readings(0, 30)));
    peer.ws.send(encodeUploadFrame(2, id, readings(20, 30)));
    peer.ws.send(encodeUploadFrame(3, id, readings(0, 50)));
    await peer.answer(1);
    await peer.answer(2);
    await peer.answer(3);
    await new Promise((r) => setTimeout(r, 100));
    const seqs = watcher.messages
      .filter((m) => m.type === 'readings-batch')
      .flatMap((m) => (m.type === 'readings-batch' ? m.readings.map((r) => r.seq) : []));
    expect(seqs.sort((a, b) => a - b)).toEqual(Array.from({ length: 50 }, (_, i) => i));
    watcher.ws.close();
    peer.ws.close();
  });

  it('stores every reading exactly once when the socket closes with batches in flight and the uploader resends on a new one', async () => {
    const id = await newCapture();
    let socket = await clientSocket('technician');
    const via: string[] = [];
    const send: SendBatch = readingsTransport({
      socket: () => socket,
      http: () => Promise.reject(new Error('this test sends by socket only')),
      onSend: (how) => via.push(how),
    });
    const uploader = new ReadingUploader(id, {
      store: new MemoryPendingStore(),
      send,
      batchSize: 100,
      flushMs: 1,
      backoffMs: [20, 50],
    });
    await uploader.add(readings(0, 400));
    // Cut the socket as soon as the first frames have left, before their answers can come back;
    // the next one is open already, so every resend goes on it.
    const fresh = await clientSocket('technician');
    while (socket.uploadsInFlight === 0) await new Promise((r) => setTimeout(r, 0));
    const lost = socket.uploadsInFlight;
    socket.close();
    socket = fresh;
    expect(lost).toBeGreaterThan(0);
    await uploader.add(readings(400, 100));
    await uploader.drained();
    const s = uploader.snapshot();
    expect(s.pending).toBe(0);
    expect(s.failures).toBeGreaterThan(0);
    expect(s.sent).toBe(500 - s.duplicates);
    expect(via.every((v) => v === 'socket')).toBe(true);
    expect(await stored(id)).toEqual({ n: 500, d: 500, lo: 0, hi: 499 });
    uploader.close();
    socket.close();
  });

  it('rejects refusals as the HTTP client does, so the uploader treats them alike', async () => {
    const others = await newCapture('engineer');
    const socket = await clientSocket('technician');
    const err = await socket.uploadReadings(others, readings(0, 2)).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ApiError);
    expect(err).toMatchObject({ status: 403, code: 'forbidden' });
    const own = await newCapture();
    const bad = await socket
      .uploadReadings(own, [
        ...readings(0, 4),
        { seq: 4, t: 0.04, value: Number.POSITIVE_INFINITY },
      ])
      .catch((e: unknown) => e);
    expect(bad).toMatchObject({ status: 400, context: { index: 4 } });
    // An aborted upload rejects with the abort's reason.
    const ctrl = new AbortController();
    const pending = socket.uploadReadings(own, readings(0, 3), ctrl.signal);
    ctrl.abort(new Error('gave up'));
    await expect(pending).rejects.toThrow('gave up');
    socket.close();
  });

  it('stops taking readings from a signed-out token and closes its socket', async () => {
    const token = await login('engineer');
    tokens.signedOut = token;
    const id = await newCapture('engineer');
    const peer = await rawSocket('signedOut');
    peer.ws.send(encodeUploadFrame(1, id, readings(0, 3)));
    expect(await peer.answer(1)).toMatchObject({ type: 'readings-ack', accepted: 3 });
    const closed = new Promise<number>((resolve) => peer.ws.on('close', (code) => resolve(code)));
    const out = await fetch(`${server.url}/api/auth/logout`, {
      method: 'POST',
      headers: { authorization: `Bearer ${token}` },
    });
    expect(out.status).toBeLessThan(300);
    // The next frame is checked against the account as it is now, not as it was at the upgrade.
    peer.ws.send(encodeUploadFrame(2, id, readings(3, 3)));
    expect(refusalOf(await peer.answer(2))).toMatchObject({ status: 401, code: 'session-ended' });
    expect(await closed).toBe(4401);
    expect(await stored(id)).toMatchObject({ n: 3 });
    tokens.engineer = await login('engineer');
  });
});

// The session check of socket frames (server/services/auth.ts userFromTokenShared): the frames of
// one session that arrive together share one users query, and every frame is still checked
// against the row as it is after the frame arrived.
describe('session checks of readings frames', () => {
  /** Counts the users-row queries the server's pool sends while `run` runs. */
  async function usersQueries<T>(
    run: (sent: () => number) => Promise<T>,
  ): Promise<{ result: T; queries: number }> {
    const pool = server.db.pool;
    const original = pool.query;
    let queries = 0;
    pool.query = function (this: typeof pool, ...args: unknown[]) {
      const text = typeof args[0] === 'string' ? args[0] : (args[0] as { text?: string })?.text;
      if (typeof text === 'string' && /FROM users WHERE id = \$1/.test(text)) queries++;
      return (original as (...a: unknown[]) => unknown).apply(this, args);
    } as typeof pool.query;
    try {
      return { result: await run(() => queries), queries };
    } finally {
      pool.query = original;
    }
  }

  it('checks a burst of frames from two sockets of one session with one or two users queries, not one per frame', async () => {
    const id = await newCapture();
    const a = await rawSocket('technician');
    const b = await rawSocket('technician');
    const frames = MAX_UPLOADS_IN_FLIGHT;
    // Sent together: the server reads them in the same turn or while the first look-up runs.
    const burst = await usersQueries(async () => {
      for (let k = 0; k < frames; k++) {
        a.ws.send(encodeUploadFrame(300 + k, id, readings(k * 10, 10)));
        b.ws.send(encodeUploadFrame(400 + k, id, readings(1000 + k * 10, 10)));
      }
      return Promise.all([
        ...Array.from({ length: frames }, (_, k) => a.answer(300 + k)),
        ...Array.from({ length: frames }, (_, k) => b.answer(400 + k)),
      ]);
    });
    for (const m of burst.result) expect(m).toMatchObject({ type: 'readings-ack', accepted: 10 });
    // One per frame (16) before frames shared their look-up.
    expect(burst.queries).toBeGreaterThanOrEqual(1);
    expect(burst.queries).toBeLessThanOrEqual(2);

    // While a look-up is held up inside PostgreSQL, every frame arriving meanwhile waits for and
    // shares the next one: exactly two queries for the whole burst.
    const holder = await server.db.pool.connect();
    try {
      const held = await usersQueries(async (sent) => {
        await holder.query('BEGIN');
        await holder.query('LOCK TABLE users IN ACCESS EXCLUSIVE MODE');
        const checks = sharedSessionStats.checks;
        a.ws.send(encodeUploadFrame(500, id, readings(2000, 10)));
        // Once the first look-up is sent (it waits on the lock), the rest arrive behind it.
        for (let i = 0; i < 500 && sent() === 0; i++) await new Promise((r) => setTimeout(r, 10));
        expect(sent()).toBe(1);
        for (let k = 1; k < frames; k++) {
          a.ws.send(encodeUploadFrame(500 + k, id, readings(2000 + k * 10, 10)));
          b.ws.send(encodeUploadFrame(600 + k, id, readings(3000 + k * 10, 10)));
          await new Promise((r) => setTimeout(r, 5));
        }
        // Every frame has reached its session check (and waits) before the lock goes.
        for (let i = 0; i < 500 && sharedSessionStats.checks - checks < 2 * frames - 1; i++)
          await new Promise((r) => setTimeout(r, 10));
        expect(sharedSessionStats.checks - checks).toBe(2 * frames - 1);
        // Nothing answered while the users row cannot be read.
        expect(a.messages.some((m) => m.type === 'readings-ack' && m.id === 500)).toBe(false);
        await holder.query('COMMIT');
        return Promise.all([
          ...Array.from({ length: frames }, (_, k) => a.answer(500 + k)),
          ...Array.from({ length: frames - 1 }, (_, k) => b.answer(601 + k)),
        ]);
      });
      for (const m of held.result) expect(m).toMatchObject({ type: 'readings-ack', accepted: 10 });
      expect(held.queries).toBe(2);
    } finally {
      await holder.query('ROLLBACK').catch(() => {});
      holder.release();
    }
    expect(await stored(id)).toMatchObject({ n: 2 * frames * 10 + (2 * frames - 1) * 10 });
    a.ws.close();
    b.ws.close();
  });

  it('honours a role change made between two bursts for every frame of the second', async () => {
    const created = await api('admin', 'POST', '/api/users', {
      email: 'burst-operator@kestrelbay.example',
      name: 'Burst Operator',
      role: 'technician',
      password: 'burst-operator-passphrase-1',
    });
    expect(created.status, JSON.stringify(created.body)).toBe(201);
    const userId = created.body.user.id as number;
    const res = await fetch(`${server.url}/api/auth/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({
        email: 'burst-operator@kestrelbay.example',
        password: 'burst-operator-passphrase-1',
      }),
    });
    tokens.burst = ((await res.json()) as { token: string }).token;
    const id = await newCapture('burst');
    const peer = await rawSocket('burst');
    const burst = async (first: number, from: number) => {
      for (let k = 0; k < 4; k++)
        peer.ws.send(encodeUploadFrame(first + k, id, readings(from + k * 10, 10)));
      return Promise.all(Array.from({ length: 4 }, (_, k) => peer.answer(first + k)));
    };
    for (const m of await burst(1, 0))
      expect(m).toMatchObject({ type: 'readings-ack', accepted: 10 });

    // The role as stored now, with the token still valid: a viewer may not record.
    const demoted = await server.db.pool.query("UPDATE users SET role = 'viewer' WHERE id = $1", [
      userId,
    ]);
    expect(demoted.rowCount).toBe(1);
    for (const m of await burst(11, 40))
      expect(refusalOf(m)).toMatchObject({ status: 403, code: 'forbidden' });
    await server.db.pool.query("UPDATE users SET role = 'technician' WHERE id = $1", [userId]);
    for (const m of await burst(21, 40))
      expect(m).toMatchObject({ type: 'readings-ack', accepted: 10 });

    // An admin's role change through the API revokes the session: every frame after it is refused.
    const closed = new Promise<number>((resolve) => peer.ws.on('close', (code) => resolve(code)));
    const patched = await api('admin', 'PATCH', `/api/users/${userId}`, { role: 'engineer' });
    expect(patched.status, JSON.stringify(patched.body)).toBe(200);
    for (let k = 0; k < 4; k++)
      peer.ws.send(encodeUploadFrame(31 + k, id, readings(80 + k * 10, 10)));
    expect(await closed).toBe(4401);
    // The socket closes after the first refusal (the refusal goes first, on the same connection);
    // whatever of the burst was answered was refused.
    const late = peer.messages.filter(
      (m) => (m.type === 'readings-ack' || m.type === 'readings-refused') && m.id >= 31,
    );
    expect(late.length).toBeGreaterThanOrEqual(1);
    for (const m of late)
      expect(refusalOf(m)).toMatchObject({ status: 401, code: 'session-ended' });
    expect(await stored(id)).toMatchObject({ n: 80, lo: 0, hi: 79 });
  });
});
