/**
 * `npm run sim`: the simulator hub on its own, on 127.0.0.1:${SIM_PORT ?? 5171}.
 * Plain HTTP answers with the list of endpoints; WebSocket upgrades go to the hub.
 */
import { createServer } from 'node:http';
import { createSimulatorHub } from './server';

const port = Number(process.env.SIM_PORT ?? 5171);
const host = '127.0.0.1';
const hub = createSimulatorHub({ log: (m) => console.log(m) });

const examples = [
  `ws://${host}:${port}/sim/counter?preset=xtal-16m&checkpoint=0            (SCPI query mode)`,
  `ws://${host}:${port}/sim/counter?mode=talk&preset=tf-32k&checkpoint=2&accel=10`,
  `ws://${host}:${port}/sim/counter?nominal=10e6&wfm=1e-11&gate=0.1&mode=talk`,
  `ws://${host}:${port}/sim/spi-bridge?preset=accel&orientation=flat`,
];

const server = createServer((_req, res) => {
  res.writeHead(200, { 'content-type': 'text/plain; charset=utf-8' });
  res.end(`Driftbench simulators (WebSocket endpoints):\n${examples.join('\n')}\n`);
});
server.on('upgrade', (req, socket, head) => {
  if (!hub.handleUpgrade(req, socket, head)) socket.destroy();
});
server.listen(port, host, () => {
  console.log(`Driftbench simulators on http://${host}:${port}`);
  for (const e of examples) console.log(`  ${e}`);
});

async function shutdown() {
  await hub.close();
  server.close(() => process.exit(0));
}
process.on('SIGINT', () => void shutdown());
process.on('SIGTERM', () => void shutdown());
