import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type WebSocket } from 'ws';
import type pg from 'pg';
import jwt from 'jsonwebtoken';
import type { Logger } from 'pino';
import { userFromToken } from '../services/auth.js';
import { tokenFromProtocolHeader, WS_PROTOCOL } from '../../shared/protocol/socketAuth.js';
import type { UpgradeHandler } from './upgrade.js';
import {
  ClientMessage,
  CLIENT_MESSAGE_TYPES,
  messageProblem,
  type ServerMessage,
} from '../../shared/protocol/live.js';
import { UPLOAD_MAX_FRAME, UPLOAD_MAX_READINGS } from '../../shared/protocol/liveUpload.js';
import { createUploadHandler, type UploadPeer } from './uploads.js';

// The hub's interface lives beside the services that publish to it, so they never import this file.
import type { LiveHub } from '../services/liveHub.js';
export { silentHub, type LiveHub } from '../services/liveHub.js';

interface Peer extends UploadPeer {
  ws: WebSocket;
  watching: Set<number>;
  alive: boolean;
  userId: number;
  /** When the peer's sign-in token expires (ms since epoch). */
  expiresAt: number;
  /** The token version the socket signed in with; a newer one (sign-out, password change) ends it. */
  tokenVersion: number;
}

/** Largest JSON (text) message; binary readings frames may be up to UPLOAD_MAX_FRAME. */
const MAX_TEXT_MESSAGE = 64 * 1024;
/**
 * Largest frame read at all: above UPLOAD_MAX_FRAME, so a frame of a few readings too many is
 * answered with a 413 that names the limit; a larger one ends the socket (1009, message too big).
 */
export const MAX_FRAME = Math.max(1024 * 1024, UPLOAD_MAX_FRAME);
/** Most captures one socket may watch at once. */
const MAX_WATCHED = 100;
/** Close code for a session that ended (deactivated account or expired token). */
export const SESSION_ENDED = 4401;

/**
 * The authenticated WebSocket endpoint `/ws`: the token comes in the `Sec-WebSocket-Protocol`
 * header (`driftbench.token.<jwt>`, see shared/protocol/socketAuth.ts), never in the URL. Watchers
 * subscribe to captures and receive every accepted reading as soon as its batch is committed.
 * A bench uploads its readings on the same socket: each batch is a binary frame
 * (shared/protocol/liveUpload.ts) answered by `readings-ack` or `readings-refused` (./uploads.ts).
 */
export function createLiveHub(
  jwtSecret: string,
  pool: pg.Pool,
  opts: { log?: Logger } = {},
): LiveHub & UpgradeHandler & { recheckSessions(): Promise<void> } {
  // The server answers with the plain protocol name, never echoing the token. Frames up to one
  // readings batch of the HTTP route's largest size are read; text messages are held to 64 KiB.
  const wss = new WebSocketServer({
    noServer: true,
    maxPayload: MAX_FRAME,
    handleProtocols: () => WS_PROTOCOL,
  });
  const peers = new Set<Peer>();
  const watchers = new Map<number, Set<Peer>>();

  const send = (peer: Peer, msg: ServerMessage) => {
    if (peer.ws.readyState === peer.ws.OPEN) peer.ws.send(JSON.stringify(msg));
  };
  const unwatch = (peer: Peer, captureId: number) => {
    peer.watching.delete(captureId);
    const set = watchers.get(captureId);
    set?.delete(peer);
    if (set && set.size === 0) watchers.delete(captureId);
  };

  const handlers: {
    [K in ClientMessage['type']]: (peer: Peer, msg: Extract<ClientMessage, { type: K }>) => void;
  } = {
    watch(peer, msg) {
      if (peer.watching.size >= MAX_WATCHED && !peer.watching.has(msg.captureId)) {
        send(peer, {
          type: 'error',
          code: 'too-many',
          message: `A connection may watch at most ${MAX_WATCHED} captures.`,
        });
        return;
      }
      peer.watching.add(msg.captureId);
      let set = watchers.get(msg.captureId);
      if (!set) watchers.set(msg.captureId, (set = new Set()));
      set.add(peer);
    },
    unwatch(peer, msg) {
      unwatch(peer, msg.captureId);
    },
    ping(peer, msg) {
      send(peer, { type: 'pong', id: msg.id });
    },
  };

  /**
   * Ends the sockets whose session is over — an expired token or a deactivated account — so
   * watching stops as sign-in does. Runs with every heartbeat.
   */
  async function recheckSessions(): Promise<void> {
    if (peers.size === 0) return;
    const ids = [...new Set([...peers].map((p) => p.userId))];
    const res = await pool.query<{ id: number; token_version: number }>(
      'SELECT id, token_version FROM users WHERE id = ANY($1) AND active',
      [ids],
    );
    const active = new Map(res.rows.map((r) => [r.id, r.token_version]));
    const now = Date.now();
    for (const peer of peers) {
      if (active.get(peer.userId) !== peer.tokenVersion || peer.expiresAt <= now)
        peer.ws.close(SESSION_ENDED, 'session ended');
    }
  }

  const heartbeat = setInterval(() => {
    for (const peer of peers) {
      if (!peer.alive) {
        peer.ws.terminate();
        continue;
      }
      peer.alive = false;
      peer.ws.ping();
    }
    recheckSessions().catch(() => {
      // The database is away; the next heartbeat tries again.
    });
  }, 30_000);
  heartbeat.unref();

  function accept(
    ws: WebSocket,
    token: string,
    userId: number,
    expiresAt: number,
    tokenVersion: number,
  ) {
    const peer: Peer = {
      ws,
      watching: new Set(),
      alive: true,
      userId,
      expiresAt,
      tokenVersion,
      token,
      uploadsInFlight: 0,
    };
    peers.add(peer);
    // A protocol error (e.g. a frame over maxPayload) must end this socket, not the server.
    ws.on('error', () => ws.terminate());
    ws.on('pong', () => (peer.alive = true));
    ws.on('message', (data, isBinary) => {
      if (isBinary) {
        // A readings batch: answered on its own when stored or refused (./uploads.ts).
        // The handler answers every failure itself; anything that still escapes ends this socket
        // (the uploader resends), never the server.
        upload(
          peer,
          toBuffer(data),
          (msg) => send(peer, msg),
          () => peer.ws.close(SESSION_ENDED, 'session ended'),
        ).catch((err: unknown) => {
          opts.log?.error({ err }, 'readings frame handler failed');
          ws.terminate();
        });
        return;
      }
      if (byteLength(data) > MAX_TEXT_MESSAGE) {
        ws.close(1009, 'message too big');
        return;
      }
      let raw: unknown;
      try {
        raw = JSON.parse(String(data));
      } catch {
        send(peer, { type: 'error', code: 'bad-message', message: 'Messages must be JSON.' });
        return;
      }
      // Every message is checked against the contract (shared/protocol/live.ts) before a handler sees it.
      const type =
        typeof raw === 'object' && raw !== null ? (raw as { type?: unknown }).type : undefined;
      if (typeof type !== 'string' || !(CLIENT_MESSAGE_TYPES as readonly string[]).includes(type)) {
        send(peer, {
          type: 'error',
          code: 'unknown-type',
          message: `Unknown message type; expected one of ${CLIENT_MESSAGE_TYPES.join(', ')}.`,
        });
        return;
      }
      const parsed = ClientMessage.safeParse(raw);
      if (!parsed.success) {
        send(peer, {
          type: 'error',
          code: 'bad-message',
          message: `A "${type}" message was refused: ${messageProblem(parsed.error)}.`,
        });
        return;
      }
      const msg = parsed.data;
      try {
        (handlers[msg.type] as (p: Peer, m: ClientMessage) => void)(peer, msg);
      } catch {
        send(peer, {
          type: 'error',
          code: 'bad-message',
          message: 'The message could not be handled.',
        });
      }
    });
    ws.on('close', () => {
      for (const id of [...peer.watching]) unwatch(peer, id);
      peers.delete(peer);
    });
    send(peer, { type: 'hello', userId, uploads: { maxReadings: UPLOAD_MAX_READINGS } });
  }

  const hub: LiveHub & UpgradeHandler & { recheckSessions(): Promise<void> } = {
    handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean {
      const url = new URL(req.url ?? '/', 'http://localhost');
      if (url.pathname !== '/ws') return false;
      const token = tokenFromProtocolHeader(req.headers['sec-websocket-protocol']) ?? '';
      userFromToken(token, jwtSecret, pool)
        .then((user) => {
          if (user.mustChangePassword) throw new Error('password change required');
          const claims = jwt.decode(token) as jwt.JwtPayload | null;
          const exp = claims?.exp;
          wss.handleUpgrade(req, socket, head, (ws) =>
            accept(ws, token, user.id, exp ? exp * 1000 : Infinity, Number(claims?.tv ?? 0)),
          );
        })
        .catch(() => {
          socket.write('HTTP/1.1 401 Unauthorized\r\nConnection: close\r\n\r\n');
          socket.destroy();
        });
      return true;
    },
    recheckSessions,
    hasWatchers: (captureId) => (watchers.get(captureId)?.size ?? 0) > 0,
    publishReadings(captureId, readings) {
      const set = watchers.get(captureId);
      if (!set || readings.length === 0) return;
      const payload = JSON.stringify({
        type: 'readings-batch',
        captureId,
        readings,
        sentAt: Date.now(),
      } satisfies ServerMessage);
      for (const peer of set) if (peer.ws.readyState === peer.ws.OPEN) peer.ws.send(payload);
    },
    publishState(captureId, state) {
      const set = watchers.get(captureId);
      if (set) for (const peer of set) send(peer, { type: 'capture-state', captureId, state });
      for (const peer of peers) send(peer, { type: 'on-air-changed' });
    },
    async close() {
      clearInterval(heartbeat);
      for (const peer of peers) peer.ws.terminate();
      await new Promise<void>((resolve) => wss.close(() => resolve()));
    },
  };
  // Uploaded batches publish to this hub's watchers, as the HTTP route's do.
  const upload = createUploadHandler({ jwtSecret, pool, hub, log: opts.log });
  return hub;
}

/** A message's bytes as one Buffer (ws hands over a Buffer, an ArrayBuffer or fragments). */
function toBuffer(data: Buffer | ArrayBuffer | Buffer[]): Buffer {
  if (Buffer.isBuffer(data)) return data;
  if (Array.isArray(data)) return Buffer.concat(data);
  return Buffer.from(data);
}

function byteLength(data: Buffer | ArrayBuffer | Buffer[]): number {
  if (Array.isArray(data)) return data.reduce((n, b) => n + b.length, 0);
  return data.byteLength;
}
