/**
 * The simulator hub: WebSocket endpoints that each carry one simulated device's serial line.
 *
 *   /sim/counter?mode=talk&preset=tf-32k&checkpoint=2&accel=100   a frequency counter
 *   /sim/spi-bridge?orientation=edge&noise=1.5                      an SPI bridge + accelerometer
 *   /sim/thermometer                                                the bench thermometer (MEAS:TEMP?)
 *
 * Every socket is an independent device session: binary frames carry exactly the bytes a
 * serial line would (text frames are accepted too, as their UTF-8 bytes). Bad parameters close
 * the socket with 1008 and the reason. The main server mounts the hub by offering it each
 * upgrade; `handleUpgrade` returns false for paths that are not the hub's.
 */
import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type WebSocket, type RawData } from 'ws';
import { type Clock, realClock } from './clock';
import { SimCounter } from './counter';
import { SimAccelerometer } from './accelerometer';
import { SimSpiBridge } from './spiBridge';
import { SimThermometer } from './thermometer';
import { accelConfigFromQuery, counterConfigFromQuery } from './params';

export const SIM_PATHS = ['/sim/counter', '/sim/spi-bridge', '/sim/thermometer'] as const;
export type SimPath = (typeof SIM_PATHS)[number];

/** Largest frame a simulator socket accepts (bytes). */
export const SIM_MAX_FRAME = 64 * 1024;

export interface SimulatorHubOptions {
  /** Clock for each new device (default: the real clock). Tests may pass a shared fake. */
  clock?: () => Clock;
  /** Interval between pings; a peer that missed one pong is dropped. Default 30 s. */
  pingIntervalMs?: number;
  /** Output is dropped while this many bytes wait unsent (a flooded serial line). Default 4 MiB. */
  maxBufferedBytes?: number;
  log?: (message: string) => void;
}

export interface SimulatorHub {
  handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean;
  close(): Promise<void>;
  /** Open device sessions. */
  readonly sessions: number;
}

interface Device {
  write(bytes: Uint8Array): void;
  stop(): void;
}

/** WebSocket close reasons are limited to 123 bytes. */
function reason(text: string): string {
  const enc = new TextEncoder();
  let t = text;
  while (enc.encode(t).length > 123) t = t.slice(0, -2) + '…';
  return t;
}

function toBytes(data: RawData): Uint8Array {
  if (Array.isArray(data)) return new Uint8Array(Buffer.concat(data));
  if (data instanceof ArrayBuffer) return new Uint8Array(data);
  return new Uint8Array(data.buffer, data.byteOffset, data.byteLength);
}

/** Creates the hub (see the module comment). */
export function createSimulatorHub(opts: SimulatorHubOptions = {}): SimulatorHub {
  const makeClock = opts.clock ?? realClock;
  const maxBuffered = opts.maxBufferedBytes ?? 4 * 1024 * 1024;
  const log = opts.log ?? (() => {});
  // A serial line carries a few bytes per command: a frame over 64 KiB ends that socket (1009).
  const wss = new WebSocketServer({ noServer: true, maxPayload: SIM_MAX_FRAME });
  const alive = new WeakMap<WebSocket, boolean>();
  const devices = new Map<WebSocket, Device>();

  const pinger = setInterval(() => {
    for (const ws of wss.clients) {
      if (alive.get(ws) === false) {
        ws.terminate();
        continue;
      }
      alive.set(ws, false);
      ws.ping();
    }
  }, opts.pingIntervalMs ?? 30_000);
  pinger.unref?.();

  function startSession(ws: WebSocket, path: SimPath, query: URLSearchParams): void {
    alive.set(ws, true);
    ws.on('pong', () => alive.set(ws, true));
    ws.on('error', (err) => log(`sim socket error: ${err.message}`));
    const send = (bytes: Uint8Array) => {
      if (ws.readyState === ws.OPEN && ws.bufferedAmount < maxBuffered)
        ws.send(bytes, { binary: true });
    };
    let device: Device;
    if (path === '/sim/counter') {
      const r = counterConfigFromQuery(query);
      if (!r.ok) return ws.close(1008, reason(`bad counter parameters: ${r.message}`));
      const counter = new SimCounter(r.config, makeClock());
      counter.onData = send;
      counter.start();
      device = counter;
    } else if (path === '/sim/thermometer') {
      const thermometer = new SimThermometer(makeClock());
      thermometer.onData = send;
      device = thermometer;
    } else {
      const r = accelConfigFromQuery(query);
      if (!r.ok) return ws.close(1008, reason(`bad spi-bridge parameters: ${r.message}`));
      const bridge = new SimSpiBridge(
        new SimAccelerometer(r.config, makeClock()),
        `SN${String(r.config.seed % 100000).padStart(5, '0')}`,
      );
      bridge.onData = send;
      device = bridge;
    }
    devices.set(ws, device);
    ws.on('message', (data) => device.write(toBytes(data)));
    ws.on('close', () => {
      device.stop();
      devices.delete(ws);
    });
    log(`sim session ${path}?${query.toString()}`);
  }

  return {
    handleUpgrade(req, socket, head) {
      const url = new URL(req.url ?? '/', 'http://localhost');
      const path = SIM_PATHS.find((p) => p === url.pathname);
      if (!path) return false;
      wss.handleUpgrade(req, socket, head, (ws) => startSession(ws, path, url.searchParams));
      return true;
    },
    async close() {
      clearInterval(pinger);
      for (const [ws, device] of devices) {
        device.stop();
        ws.terminate();
      }
      devices.clear();
      for (const ws of wss.clients) ws.terminate();
      await new Promise<void>((resolve) => wss.close(() => resolve()));
    },
    get sessions() {
      return devices.size;
    },
  };
}
