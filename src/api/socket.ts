/**
 * The client of the live endpoint `/ws`: one WebSocket per page, reconnected with exponential
 * backoff after any loss, with every watched capture re-subscribed on reconnect. The session token
 * travels in the `Sec-WebSocket-Protocol` header (shared/protocol/socketAuth.ts), never in the URL.
 */
import { ServerMessage, messageProblem, type ClientMessage } from '../../shared/protocol/live';
import { socketProtocols } from '../../shared/protocol/socketAuth';

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

export class LiveSocket {
  private ws: WebSocket | null = null;
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
      for (const l of this.listeners) l(msg);
      if ('captureId' in msg) this.watched.get(msg.captureId)?.forEach((h) => h(msg));
    };
    ws.onclose = () => {
      if (this.ws !== ws) return;
      this.ws = null;
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
