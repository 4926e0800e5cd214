import { describe, expect, it } from 'vitest';
import {
  decodeUploadFrame,
  encodeUploadFrame,
  UPLOAD_HEADER_BYTES,
  UPLOAD_MAX_READINGS,
} from '../../shared/protocol/liveUpload.js';
import { decodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';
import { ReadingsAck, ReadingsRefused, ServerMessage } from '../../shared/protocol/live.js';
import { LiveSocket, SocketClosedError } from '../../src/api/socket.js';
import { readingsTransport, type UploadSocket } from '../../src/api/readingsTransport.js';
import { ApiError } from '../../src/api/http.js';
import type { IngestResult, ReadingIn } from '../../shared/protocol/captures.js';

describe('the readings frame', () => {
  it('lays out the header as documented, then the binary body', () => {
    const frame = encodeUploadFrame(0x01020304, 7, [{ seq: 1, t: 0.5, value: 2 }]);
    // The layout of shared/protocol/liveUpload.ts, little-endian: kind 1, version 1, header 16,
    // id, capture 7, one reading.
    expect([...frame.subarray(0, UPLOAD_HEADER_BYTES)]).toEqual([
      1, 1, 16, 0, 4, 3, 2, 1, 7, 0, 0, 0, 1, 0, 0, 0,
    ]);
    // IEEE 754 binary64, little-endian, from memory: 1.0 = 3FF0…, 0.5 = 3FE0…, 2.0 = 4000…, 0 = 0.
    expect([...frame.subarray(16)]).toEqual([
      0, 0, 0, 0, 0, 0, 0xf0, 0x3f, 0, 0, 0, 0, 0, 0, 0xe0, 0x3f, 0, 0, 0, 0, 0, 0, 0, 0x40, 0, 0,
      0, 0, 0, 0, 0, 0,
    ]);
  });

  it('reads back what it wrote, the body as the route reads it', () => {
    const readings: ReadingIn[] = [
      { seq: 10, t: 0.1, value: 16_000_000.0123, flags: 0 },
      { seq: 11, t: 0.2, value: -3.5, flags: 4 },
    ];
    const frame = decodeUploadFrame(encodeUploadFrame(4_000_000_000, 2_147_483_647, readings));
    expect('body' in frame).toBe(true);
    if (!('body' in frame)) return;
    expect(frame.id).toBe(4_000_000_000);
    expect(frame.captureId).toBe(2_147_483_647);
    expect(decodeReadingsF64(frame.body)).toEqual({
      seq: [10, 11],
      t: [0.1, 0.2],
      value: [16_000_000.0123, -3.5],
      flags: [0, 4],
    });
  });

  it('refuses a short frame, a foreign kind or version, a length that disagrees and too many readings', () => {
    expect(decodeUploadFrame(new Uint8Array(5))).toMatchObject({
      id: null,
      status: 400,
      code: 'bad-frame',
    });
    expect(decodeUploadFrame(encodeUploadFrame(9, 3, []).subarray(0, 12))).toMatchObject({
      id: 9,
      status: 400,
      code: 'bad-frame',
    });
    const kind = encodeUploadFrame(9, 3, []);
    kind[0] = 2;
    expect(decodeUploadFrame(kind)).toMatchObject({ id: 9, status: 415 });
    const version = encodeUploadFrame(9, 3, []);
    version[1] = 9;
    expect(decodeUploadFrame(version)).toMatchObject({ status: 415, code: 'unsupported-frame' });
    const cut = encodeUploadFrame(9, 3, [{ seq: 0, t: 0, value: 1 }]).subarray(0, 40);
    expect(decodeUploadFrame(cut)).toMatchObject({ id: 9, captureId: 3, status: 400 });
    const lying = encodeUploadFrame(9, 3, [{ seq: 0, t: 0, value: 1 }]);
    new DataView(lying.buffer).setUint32(12, UPLOAD_MAX_READINGS + 1, true);
    expect(decodeUploadFrame(lying)).toMatchObject({ status: 413, code: 'too-large' });
    // An empty batch is a frame like any other (the route answers it with accepted 0).
    expect(decodeUploadFrame(encodeUploadFrame(9, 3, []))).toMatchObject({ id: 9, captureId: 3 });
  });
});

describe('the answers to a frame', () => {
  it('parses an ack and a refusal, refuses a malformed one', () => {
    const ack = {
      type: 'readings-ack',
      id: 3,
      captureId: 5,
      accepted: 10,
      duplicates: 0,
      highestSeq: 9,
    };
    expect(ReadingsAck.safeParse(ack).success).toBe(true);
    expect(ServerMessage.safeParse(ack).success).toBe(true);
    expect(ServerMessage.safeParse({ ...ack, accepted: -1 }).success).toBe(false);
    expect(ServerMessage.safeParse({ ...ack, id: 2 ** 32 }).success).toBe(false);
    const refused = {
      type: 'readings-refused',
      id: 3,
      captureId: 5,
      status: 409,
      code: 'capture-finished',
      message: 'This capture is finished: it takes no more readings.',
    };
    expect(ReadingsRefused.safeParse(refused).success).toBe(true);
    expect(ServerMessage.safeParse({ ...refused, details: { index: 2 } }).success).toBe(true);
    expect(ServerMessage.safeParse({ ...refused, status: 200 }).success).toBe(false);
    expect(ServerMessage.safeParse({ ...refused, code: undefined }).success).toBe(false);
    expect(ServerMessage.safeParse({ type: 'hello', userId: 1 }).success).toBe(true);
    expect(
      ServerMessage.safeParse({ type: 'hello', userId: 1, uploads: { maxReadings: 0 } }).success,
    ).toBe(false);
  });
});

/** A stand-in WebSocket the test drives by hand (binary frames recorded as bytes). */
class FakeSocket {
  static last: FakeSocket | null = null;
  readyState = 0;
  sent: Array<string | Uint8Array> = [];
  onopen: (() => void) | null = null;
  onmessage: ((ev: { data: string }) => void) | null = null;
  onclose: (() => void) | null = null;
  onerror: (() => void) | null = null;
  constructor() {
    FakeSocket.last = this;
  }
  send(data: string | Uint8Array) {
    this.sent.push(data);
  }
  close() {}
  open(hello: object = { type: 'hello', userId: 1, uploads: { maxReadings: 100 } }) {
    this.readyState = 1;
    this.onopen!();
    this.onmessage!({ data: JSON.stringify(hello) });
  }
  answer(msg: object) {
    this.onmessage!({ data: JSON.stringify(msg) });
  }
  drop() {
    this.readyState = 3;
    this.onclose!();
  }
}

function fakeLiveSocket() {
  const socket = new LiveSocket({
    getToken: () => 'token',
    url: 'ws://localhost/ws',
    WebSocket: FakeSocket as unknown as typeof WebSocket,
    backoffMs: [60_000, 60_000],
  });
  return { socket, ws: FakeSocket.last! };
}

const three: ReadingIn[] = [
  { seq: 0, t: 0, value: 1 },
  { seq: 1, t: 1, value: 2 },
  { seq: 2, t: 2, value: 3 },
];

describe('the client socket as an upload channel', () => {
  it('takes uploads only once open and after a hello that offers them, up to its size', () => {
    const { socket, ws } = fakeLiveSocket();
    expect(socket.canUpload(1)).toBe(false);
    ws.readyState = 1;
    ws.onopen!();
    expect(socket.canUpload(1)).toBe(false);
    ws.answer({ type: 'hello', userId: 1 });
    expect(socket.canUpload(1)).toBe(false);
    ws.answer({ type: 'hello', userId: 1, uploads: { maxReadings: 100 } });
    expect(socket.canUpload(100)).toBe(true);
    expect(socket.canUpload(101)).toBe(false);
    socket.close();
    expect(socket.canUpload(1)).toBe(false);
  });

  it('resolves an ack, rejects a refusal as an ApiError and a closed socket as SocketClosedError', async () => {
    const { socket, ws } = fakeLiveSocket();
    ws.open();
    const first = socket.uploadReadings(5, three);
    const second = socket.uploadReadings(5, three);
    const [f1, f2] = ws.sent.map((d) => decodeUploadFrame(d as Uint8Array));
    expect(f1).toMatchObject({ captureId: 5 });
    if (!('body' in f1) || !('body' in f2)) throw new Error('frames expected');
    expect(f2.id).not.toBe(f1.id);
    ws.answer({
      type: 'readings-refused',
      id: f2.id,
      captureId: 5,
      status: 400,
      code: 'validation',
      message: 'reading 1: value must be a finite number',
      details: { index: 1, reason: 'value must be a finite number' },
    });
    ws.answer({
      type: 'readings-ack',
      id: f1.id,
      captureId: 5,
      accepted: 3,
      duplicates: 0,
      highestSeq: 2,
    });
    expect(await first).toEqual({ accepted: 3, duplicates: 0, highestSeq: 2 });
    const err = await second.catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ApiError);
    expect(err).toMatchObject({ status: 400, code: 'validation', context: { index: 1 } });
    const third = socket.uploadReadings(5, three);
    expect(socket.uploadsInFlight).toBe(1);
    ws.drop();
    await expect(third).rejects.toBeInstanceOf(SocketClosedError);
    expect(socket.uploadsInFlight).toBe(0);
    socket.close();
  });

  it('rejects at once when aborted and drops the late answer', async () => {
    const { socket, ws } = fakeLiveSocket();
    ws.open();
    const ctrl = new AbortController();
    const pending = socket.uploadReadings(5, three, ctrl.signal);
    ctrl.abort(new Error('timed out'));
    await expect(pending).rejects.toThrow('timed out');
    const frame = decodeUploadFrame(ws.sent[0] as Uint8Array);
    if (!('body' in frame)) throw new Error('frame expected');
    ws.answer({
      type: 'readings-ack',
      id: frame.id,
      captureId: 5,
      accepted: 3,
      duplicates: 0,
      highestSeq: 2,
    });
    expect(socket.uploadsInFlight).toBe(0);
    // An already aborted signal never sends.
    await expect(
      socket.uploadReadings(5, three, AbortSignal.abort(new Error('no'))),
    ).rejects.toThrow('no');
    expect(ws.sent).toHaveLength(1);
    socket.close();
  });
});

describe('a socket that answers nothing', () => {
  it('is given up when the uploader times a send out: pending frames reject and it connects again', async () => {
    const { socket, ws } = fakeLiveSocket();
    ws.open();
    const send = readingsTransport({
      socket,
      http: () => Promise.reject(new Error('not expected')),
    });
    const ctrl = new AbortController();
    const timedOut = send(5, three, ctrl.signal, 'f64');
    const other = socket.uploadReadings(6, three);
    ctrl.abort(new Error('no answer in time'));
    await expect(timedOut).rejects.toThrow('no answer in time');
    await expect(other).rejects.toBeInstanceOf(SocketClosedError);
    expect(socket.canUpload(1)).toBe(false);
    expect(socket.state).toBe('reconnecting');
    socket.close();
  });
});

describe('the readings transport', () => {
  const ok: IngestResult = { accepted: 3, duplicates: 0, highestSeq: 2 };

  function fixture(open: boolean, maxReadings = 100) {
    const calls: string[] = [];
    const socket: UploadSocket = {
      canUpload: (n) => open && n <= maxReadings,
      uploadReadings: async () => {
        calls.push('socket');
        return ok;
      },
    };
    const send = readingsTransport({
      socket,
      http: async (_id, _r, _s, encoding) => {
        calls.push(`http ${encoding}`);
        return ok;
      },
    });
    return { calls, send };
  }

  it('goes over the socket while it can take the batch', async () => {
    const { calls, send } = fixture(true);
    expect(await send(5, three, undefined, 'f64')).toEqual(ok);
    expect(calls).toEqual(['socket']);
  });

  it('falls back to HTTP when the socket is not open, the batch is too large or JSON was asked for', async () => {
    const closed = fixture(false);
    await closed.send(5, three, undefined, 'f64');
    expect(closed.calls).toEqual(['http f64']);
    const small = fixture(true, 2);
    await small.send(5, three, undefined, 'f64');
    expect(small.calls).toEqual(['http f64']);
    const json = fixture(true);
    await json.send(5, three, undefined, 'json');
    expect(json.calls).toEqual(['http json']);
  });

  it('takes a getter, so a capture can open and close its socket and go by HTTP without one', async () => {
    const calls: string[] = [];
    let current: UploadSocket | null = null;
    const send = readingsTransport({
      socket: () => current,
      http: async () => {
        calls.push('http');
        return ok;
      },
    });
    await send(5, three);
    current = {
      canUpload: () => true,
      uploadReadings: async () => {
        calls.push('socket');
        return ok;
      },
    };
    await send(5, three);
    expect(calls).toEqual(['http', 'socket']);
  });
});
