import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type WebSocket } from 'ws';
import type pg from 'pg';
import { userFromToken } from '../services/auth.js';
import type { UpgradeHandler } from './upgrade.js';
import type { ClientMessage, LiveReading, ServerMessage } from '../../shared/protocol/live.js';

/** What services need from the live fan-out. */
export interface LiveHub {
  hasWatchers(captureId: number): boolean;
  publishReadings(captureId: number, readings: LiveReading[]): void;
  publishState(captureId: number, state: 'open' | 'finished' | 'aborted'): void;
}

/** A hub for when nobody can watch (scripts, Supertest). */
export const silentHub: LiveHub = {
  hasWatchers: () => false,
  publishReadings: () => {},
  publishState: () => {},
};

interface Peer {
  ws: WebSocket;
  watching: Set<number>;
  alive: boolean;
}

/**
 * The authenticated WebSocket endpoint `/ws?token=…`: watchers subscribe to captures and receive
 * every accepted reading as soon as its batch is committed.
 */
export function createLiveHub(jwtSecret: string, pool: pg.Pool): LiveHub & UpgradeHandler {
  const wss = new WebSocketServer({ noServer: true, maxPayload: 64 * 1024 });
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

  const handlers: { [K in ClientMessage['type']]: (peer: Peer, msg: Extract<ClientMessage, { type: K }>) => void } = {
    watch(peer, msg) {
      if (!Number.isInteger(msg.captureId)) return;
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

  const heartbeat = setInterval(() => {
    for (const peer of peers) {
      if (!peer.alive) {
        peer.ws.terminate();
        continue;
      }
      peer.alive = false;
      peer.ws.ping();
    }
  }, 30_000);
  heartbeat.unref();

  function accept(ws: WebSocket, userId: number) {
    const peer: Peer = { ws, watching: new Set(), alive: true };
    peers.add(peer);
    ws.on('pong', () => (peer.alive = true));
    ws.on('message', (data) => {
      let msg: ClientMessage;
      try {
        msg = JSON.parse(String(data)) as ClientMessage;
      } catch {
        send(peer, { type: 'error', code: 'bad-message', message: 'Messages must be JSON.' });
        return;
      }
      const handler = handlers[msg?.type as ClientMessage['type']] as ((p: Peer, m: ClientMessage) => void) | undefined;
      if (!handler) {
        send(peer, { type: 'error', code: 'unknown-type', message: `Unknown message type.` });
        return;
      }
      handler(peer, msg);
    });
    ws.on('close', () => {
      for (const id of [...peer.watching]) unwatch(peer, id);
      peers.delete(peer);
    });
    send(peer, { type: 'hello', userId });
  }

  return {
    handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean {
      const url = new URL(req.url ?? '/', 'http://localhost');
      if (url.pathname !== '/ws') return false;
      const token = url.searchParams.get('token') ?? '';
      userFromToken(token, jwtSecret, pool).then(
        (user) => wss.handleUpgrade(req, socket, head, (ws) => accept(ws, user.id)),
        () => {
          socket.write('HTTP/1.1 401 Unauthorized\r\nConnection: close\r\n\r\n');
          socket.destroy();
        },
      );
      return true;
    },
    hasWatchers: (captureId) => (watchers.get(captureId)?.size ?? 0) > 0,
    publishReadings(captureId, readings) {
      const set = watchers.get(captureId);
      if (!set || readings.length === 0) return;
      const payload = JSON.stringify({ type: 'readings-batch', captureId, readings, sentAt: Date.now() } satisfies ServerMessage);
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
}
