/**
 * A link to Driftbench's simulator hub over WebSocket, in the same port shape as Web Serial:
 * binary messages become the readable stream's chunks, writes are sent as binary messages.
 * The serial settings passed to `open()` are accepted and ignored, as a USB-serial bridge
 * would. Node (tests) passes a WebSocket constructor such as the `ws` package's.
 */
import type { LinkInfo, SerialLink, SerialOpenOptions } from './SerialLink';
import { socketProtocols } from '../../shared/protocol/socketAuth';

/** Where simulator links read the session token (the hub opens only for a signed-in session). */
let tokenSource: () => string | null = () => null;

/** Wires simulator links to the session (called by the session store, like the HTTP wrapper). */
export function configureSimulatorToken(getToken: () => string | null): void {
  tokenSource = getToken;
}

/** The part of the WebSocket API this module uses (browser WebSocket and `ws` both fit). */
export interface WebSocketLike {
  binaryType: string;
  readonly readyState: number;
  send(data: Uint8Array): void;
  close(code?: number, reason?: string): void;
  onopen: ((ev: unknown) => void) | null;
  onmessage: ((ev: { data: unknown }) => void) | null;
  onclose: ((ev: { code: number; reason: string }) => void) | null;
  onerror: ((ev: unknown) => void) | null;
}

export type WebSocketConstructorLike = new (
  url: string,
  protocols?: string | string[],
) => WebSocketLike;

export interface SimulatorLinkOptions {
  /** `/sim/counter` or `/sim/spi-bridge`; ignored when `url` is given. */
  path?: string;
  params?: Record<string, string | number>;
  /** A full `ws://` / `wss://` URL (tests, or a hub on another host). */
  url?: string;
  WebSocket?: WebSocketConstructorLike;
  /** The session token; default: the signed-in session's (see configureSimulatorToken). */
  token?: string | null;
}

/** `ws(s)://<this page's host><path>?<params>` — the hub mounted on the app's own server. */
export function simulatorUrl(
  path: string,
  params: Record<string, string | number> = {},
  origin?: string,
): string {
  const base = origin ?? (globalThis as { location?: { origin: string } }).location?.origin;
  if (!base) throw new Error('no page origin: pass a full simulator URL');
  const u = new URL(path, base);
  u.protocol = u.protocol === 'https:' ? 'wss:' : 'ws:';
  for (const [k, v] of Object.entries(params)) u.searchParams.set(k, String(v));
  return u.toString();
}

export class SimulatorLinkError extends Error {
  constructor(
    message: string,
    readonly code?: number,
  ) {
    super(message);
    this.name = 'SimulatorLinkError';
  }
}

const OPEN = 1;

/** Creates a simulator link; nothing connects until `open()`. */
export function createSimulatorLink(options: SimulatorLinkOptions): SerialLink {
  const url = options.url ?? simulatorUrl(options.path ?? '/sim/counter', options.params);
  const Ctor =
    options.WebSocket ??
    ((globalThis as { WebSocket?: unknown }).WebSocket as WebSocketConstructorLike | undefined);
  let ws: WebSocketLike | null = null;
  let readable: ReadableStream<Uint8Array> | null = null;
  let writable: WritableStream<Uint8Array> | null = null;
  let closing = false;
  let closedPromise: Promise<void> | null = null;
  const enc = new TextEncoder();

  const link: SerialLink = {
    kind: 'simulator',
    get readable() {
      return readable;
    },
    get writable() {
      return writable;
    },
    open(_options: SerialOpenOptions) {
      if (!Ctor)
        return Promise.reject(new SimulatorLinkError('no WebSocket implementation available'));
      if (ws) return Promise.reject(new SimulatorLinkError('link is already open'));
      closing = false;
      return new Promise<void>((resolve, reject) => {
        const sock = new Ctor(
          url,
          socketProtocols(options.token !== undefined ? options.token : tokenSource()),
        );
        ws = sock;
        sock.binaryType = 'arraybuffer';
        let opened = false;
        let controller!: ReadableStreamDefaultController<Uint8Array>;
        let resolveClosed!: () => void;
        closedPromise = new Promise<void>((r) => (resolveClosed = r));
        sock.onopen = () => {
          opened = true;
          readable = new ReadableStream<Uint8Array>({
            start: (c) => {
              controller = c;
            },
          });
          writable = new WritableStream<Uint8Array>({
            write(chunk) {
              if (sock.readyState !== OPEN)
                throw new SimulatorLinkError('simulator link is closed');
              sock.send(chunk);
            },
          });
          resolve();
        };
        sock.onmessage = (ev) => {
          if (!opened) return;
          const d = ev.data;
          const chunk =
            typeof d === 'string'
              ? enc.encode(d)
              : d instanceof ArrayBuffer
                ? new Uint8Array(d)
                : ArrayBuffer.isView(d)
                  ? new Uint8Array(d.buffer, d.byteOffset, d.byteLength)
                  : null;
          if (chunk) {
            try {
              controller.enqueue(chunk);
            } catch {
              // the reader cancelled the stream: drop the bytes, as a closed port would
            }
          }
        };
        sock.onerror = () => {
          // the close event that follows carries the reason
        };
        sock.onclose = (ev) => {
          const why = ev.reason ? `${ev.reason} (code ${ev.code})` : `closed (code ${ev.code})`;
          ws = null;
          if (!opened) {
            reject(new SimulatorLinkError(`simulator refused the link: ${why}`, ev.code));
          } else {
            try {
              controller.close();
            } catch {
              // already closed or cancelled
            }
            readable = null;
            writable = null;
            if (!closing) link.ondisconnect?.(why);
          }
          resolveClosed();
        };
      });
    },
    async close() {
      const sock = ws;
      if (!sock) return;
      closing = true;
      sock.close(1000, 'link closed');
      await closedPromise;
    },
    getInfo(): LinkInfo {
      return { simulatorUrl: url };
    },
    ondisconnect: null,
  };
  return link;
}
