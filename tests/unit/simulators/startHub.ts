/** Test helper: the simulator hub on an http server on an ephemeral port of 127.0.0.1. */
import { createServer } from 'node:http';
import type { AddressInfo } from 'node:net';
import { createSimulatorHub, type SimulatorHubOptions } from '../../../simulators/server';

export async function startHub(opts: SimulatorHubOptions = {}) {
  const hub = createSimulatorHub(opts);
  const server = createServer((_req, res) => res.writeHead(404).end());
  server.on('upgrade', (req, socket, head) => {
    if (!hub.handleUpgrade(req, socket, head)) socket.destroy();
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as AddressInfo;
  return {
    hub,
    base: `ws://127.0.0.1:${port}`,
    async stop() {
      await hub.close();
      await new Promise<void>((resolve) => server.close(() => resolve()));
    },
  };
}
