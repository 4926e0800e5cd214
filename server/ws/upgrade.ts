import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';

/** Something that may take over an HTTP upgrade; returns false when the path is not its own. */
export interface UpgradeHandler {
  handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean;
  close(): Promise<void>;
}

/** Routes each upgrade request to the first handler that claims it; refuses the rest with 404. */
export function routeUpgrades(handlers: UpgradeHandler[]) {
  return (req: IncomingMessage, socket: Duplex, head: Buffer) => {
    for (const h of handlers) if (h.handleUpgrade(req, socket, head)) return;
    socket.write('HTTP/1.1 404 Not Found\r\nConnection: close\r\n\r\n');
    socket.destroy();
  };
}
