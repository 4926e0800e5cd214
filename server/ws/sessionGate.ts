import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import type pg from 'pg';
import { userFromToken } from '../services/auth.js';
import { tokenFromProtocolHeader } from '../../shared/protocol/socketAuth.js';
import type { UpgradeHandler } from './upgrade.js';

/**
 * Puts the sign-in check of `/ws` in front of another upgrade handler (the simulator hub): an
 * upgrade on one of `paths` goes through only with a valid session token in the
 * `Sec-WebSocket-Protocol` header; anything else gets 401 and the socket is closed.
 */
export function requireSession(
  inner: UpgradeHandler,
  paths: readonly string[],
  jwtSecret: string,
  pool: pg.Pool,
): UpgradeHandler {
  return {
    handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean {
      const pathname = new URL(req.url ?? '/', 'http://localhost').pathname;
      if (!paths.includes(pathname)) return false;
      const token = tokenFromProtocolHeader(req.headers['sec-websocket-protocol']) ?? '';
      userFromToken(token, jwtSecret, pool)
        .then((user) => {
          if (user.mustChangePassword) throw new Error('password change required');
          if (!inner.handleUpgrade(req, socket, head)) throw new Error('not handled');
        })
        .catch(() => {
          socket.write('HTTP/1.1 401 Unauthorized\r\nConnection: close\r\n\r\n');
          socket.destroy();
        });
      return true;
    },
    close: () => inner.close(),
  };
}
