/**
 * The client of the live endpoint `/ws`: one WebSocket per page, reconnected with exponential
 * backoff after any loss, with every watched capture re-subscribed on reconnect. The session token
 * travels in the `Sec-WebSocket-Protocol` header (shared/protocol/socketAuth.ts), never in the URL.
 * A bench also uploads its readings on it (`uploadReadings`, shared/protocol/liveUpload.ts) once
 * the server's `hello` says it takes them; src/api/readingsTransport.ts picks socket or HTTP.
 */
import { ServerMessage, messageProblem, type ClientMessage } from '../../shared/protocol/live';
import { socketProtocols } from '../../shared/protocol/socketAuth';
import { encodeUploadFrame, UPLOAD_MAX_ID } from '../../shared/protocol/liveUpload';
import type { IngestResult, ReadingIn } from '../../shared/protocol/captures';
import { ApiError } from './http';

export type SocketState = 'connecting' | 'open' | 'reconnecting' | 'closed';

export type ServerHandler = (msg: ServerMessage) => void;

export interface LiveSocketOptions {
  /** The session token, read at every (re)connect. */
  getToken: () => string | null;
  /** Full URL override (tests); default `ws(s)://<page host>/ws`. */
  url?: string;
  /** First and longest wait between reconnects (ms); doubles in between. */
  backoffMs?: [number, number];
  onState?: (state: SocketState) => void;
  /**
   * The WebSocket constructor: the browser's by default; Node passes the `ws` package's (Node 20
   * has no global WebSocket). Anything with the browser's constructor, `send`, `close`,
   * `readyState` and `on…` handlers will do.
   */
  WebSocket?: typeof WebSocket;
  /**
   * Called with a message the server sent that is not in the contract (shared/protocol/live.ts);
   * such a message is dropped. Default: a console warning.
   */
  onInvalid?: (problem: string, data: unknown) => void;
}

function defaultUrl(): string {
  // globalThis: this module is also loaded by Node tests, where only a test's own URL is used.
  const { origin } = (globalThis as unknown as { location: { origin: string } }).location;
  const u = new URL('/ws', origin);
  u.protocol = u.protocol === 'https:' ? 'wss:' : 'ws:';
  return u.toString();
}

/** What an upload rejects with when its socket closed before the answer came (the uploader resends). */
export class SocketClosedError extends Error {
  constructor() {
    super('The live connection closed before the server answered.');
    this.name = 'SocketClosedError';
  }
}

interface PendingUpload {
  resolve: (r: IngestResult) => void;
  reject: (err: unknown) => void;
}

export class LiveSocket {
  private ws: WebSocket | null = null;
  /** Readings frames awaiting their answer, by request id. */
  private readonly uploads = new Map<number, PendingUpload>();
  private nextUploadId = 1;
  /** Most readings per frame the server takes on this connection (0: it takes no uploads). */
  private maxUploadReadings = 0;
  private readonly watched = new Map<number, Set<ServerHandler>>();
  private readonly listeners = new Set<ServerHandler>();
  private timer: ReturnType<typeof setTimeout> | null = null;
  private backoff: number;
  private closed = false;
  state: SocketState = 'connecting';

  constructor(private readonly opts: LiveSocketOptions) {
    this.backoff = opts.backoffMs?.[0] ?? 500;
    this.connect();
  }

  /** Receives every message of one capture (readings-batch, capture-state); returns an unsubscribe. */
  watch(captureId: number, handler: ServerHandler): () => void {
    let set = this.watched.get(captureId);
    if (!set) {
      this.watched.set(captureId, (set = new Set()));
      this.send({ type: 'watch', captureId });
    }
    set.add(handler);
    return () => {
      const s = this.watched.get(captureId);
      if (!s) return;
      s.delete(handler);
      if (s.size === 0) {
        this.watched.delete(captureId);
        this.send({ type: 'unwatch', captureId });
      }
    };
  }

  /** Receives every message (hello, on-air-changed, …); returns an unsubscribe. */
  listen(handler: ServerHandler): () => void {
    this.listeners.add(handler);
    return () => this.listeners.delete(handler);
  }

  /**
   * Whether a batch of `readings` readings can go on this socket now: it is open and its server
   * said (in `hello`) that it takes batches that large.
   */
  canUpload(readings: number): boolean {
    return this.ws !== null && this.ws.readyState === 1 && readings <= this.maxUploadReadings;
  }

  /**
   * Sends a readings batch as one binary frame; resolves with the server's IngestResult, rejects
   * with an ApiError carrying the route's status, code and message when refused, or with
   * {@link SocketClosedError} when the socket closes first (nothing is known then: the uploader
   * resends, and the server ignores seqs it holds). An abort rejects at once with its reason; a
   * late answer is then dropped.
   */
  uploadReadings(
    captureId: number,
    readings: ReadingIn[],
    signal?: AbortSignal,
  ): Promise<IngestResult> {
    if (signal?.aborted) return Promise.reject(signal.reason);
    const ws = this.ws;
    if (!ws || !this.canUpload(readings.length)) return Promise.reject(new SocketClosedError());
    const id = this.nextUploadId;
    this.nextUploadId = id >= UPLOAD_MAX_ID ? 1 : id + 1;
    return new Promise<IngestResult>((resolve, reject) => {
      const onAbort = () => {
        if (this.uploads.delete(id)) reject(signal!.reason);
      };
      signal?.addEventListener('abort', onAbort, { once: true });
      const done = () => signal?.removeEventListener('abort', onAbort);
      this.uploads.set(id, {
        resolve: (r) => {
          done();
          resolve(r);
        },
        reject: (e) => {
          done();
          reject(e);
        },
      });
      try {
        ws.send(encodeUploadFrame(id, captureId, readings));
      } catch (err) {
        this.uploads.delete(id);
        done();
        reject(err);
      }
    });
  }

  /** Readings frames awaiting their answer. */
  get uploadsInFlight(): number {
    return this.uploads.size;
  }

  /** Rejects every upload awaiting an answer (the socket it went on is gone). */
  private dropUploads() {
    const pending = [...this.uploads.values()];
    this.uploads.clear();
    for (const u of pending) u.reject(new SocketClosedError());
  }

  /**
   * Gives up the current connection and connects again (with the usual backoff): for a socket that
   * looks open but answers nothing (a half-open connection after a network change). Frames awaiting
   * their answer are rejected, so the uploader resends them.
   */
  reconnect(): void {
    const ws = this.ws;
    if (this.closed || !ws) return;
    this.ws = null;
    ws.onclose = null;
    try {
      ws.close(4000, 'no answer');
    } catch {
      // already closing
    }
    this.maxUploadReadings = 0;
    this.dropUploads();
    this.retry();
  }

  close(): void {
    this.closed = true;
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    const ws = this.ws;
    this.ws = null;
    if (ws) {
      ws.onclose = null;
      ws.close(1000, 'page closed');
    }
    this.maxUploadReadings = 0;
    this.dropUploads();
    this.setState('closed');
  }

  private send(msg: ClientMessage) {
    if (this.ws && this.ws.readyState === 1) this.ws.send(JSON.stringify(msg));
  }

  private invalid(problem: string, data: unknown) {
    if (this.opts.onInvalid) this.opts.onInvalid(problem, data);
    else
      console.warn(`Driftbench live socket: dropped a message outside the contract (${problem})`);
  }

  private setState(state: SocketState) {
    this.state = state;
    this.opts.onState?.(state);
  }

  private connect() {
    if (this.closed) return;
    const token = this.opts.getToken();
    const url = this.opts.url ?? defaultUrl();
    const Ctor = this.opts.WebSocket ?? WebSocket;
    let ws: WebSocket;
    try {
      ws = new Ctor(url, socketProtocols(token));
    } catch {
      this.retry();
      return;
    }
    this.ws = ws;
    ws.onopen = () => {
      this.backoff = this.opts.backoffMs?.[0] ?? 500;
      this.setState('open');
      for (const captureId of this.watched.keys()) this.send({ type: 'watch', captureId });
    };
    ws.onmessage = (ev) => {
      let raw: unknown;
      try {
        raw = JSON.parse(String(ev.data));
      } catch {
        this.invalid('not JSON', ev.data);
        return;
      }
      const parsed = ServerMessage.safeParse(raw);
      if (!parsed.success) {
        this.invalid(messageProblem(parsed.error), raw);
        return;
      }
      const msg = parsed.data;
      if (msg.type === 'readings-ack' || msg.type === 'readings-refused') {
        const pending = this.uploads.get(msg.id);
        if (!pending) return;
        this.uploads.delete(msg.id);
        if (msg.type === 'readings-ack')
          pending.resolve({
            accepted: msg.accepted,
            duplicates: msg.duplicates,
            highestSeq: msg.highestSeq,
          });
        else
          pending.reject(
            new ApiError(
              msg.status,
              msg.code,
              msg.message,
              Array.isArray(msg.details) ? msg.details : undefined,
              msg.details && typeof msg.details === 'object' && !Array.isArray(msg.details)
                ? (msg.details as Record<string, unknown>)
                : undefined,
            ),
          );
        return;
      }
      if (msg.type === 'hello') this.maxUploadReadings = msg.uploads?.maxReadings ?? 0;
      for (const l of this.listeners) l(msg);
      if ('captureId' in msg) this.watched.get(msg.captureId)?.forEach((h) => h(msg));
    };
    // An error is followed by a close, which reconnects; the `ws` package (Node) would otherwise
    // throw an error nobody listens for.
    ws.onerror = () => {};
    ws.onclose = () => {
      if (this.ws !== ws) return;
      this.ws = null;
      this.maxUploadReadings = 0;
      this.dropUploads();
      this.retry();
    };
  }

  private retry() {
    if (this.closed) return;
    this.setState('reconnecting');
    const wait = this.backoff;
    this.backoff = Math.min(this.backoff * 2, this.opts.backoffMs?.[1] ?? 10_000);
    this.timer = setTimeout(() => {
      this.timer = null;
      this.setState('connecting');
      this.connect();
    }, wait);
  }
}

/** Opens the live socket for this page. */
export function openLiveSocket(opts: LiveSocketOptions): LiveSocket {
  return new LiveSocket(opts);
}
