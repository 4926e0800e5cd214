/** The Web Serial wrapper against a fake port and a fake navigator.serial. */
import { describe, expect, it } from 'vitest';
import {
  wrapSerialPort,
  serialSupported,
  type WebSerialLike,
  type WebSerialPortLike,
} from '../../../src/links/webSerialLink';

function fakes() {
  const listeners = new Set<(ev: { target: unknown }) => void>();
  const opened: unknown[] = [];
  const port: WebSerialPortLike = {
    readable: new ReadableStream<Uint8Array>(),
    writable: new WritableStream<Uint8Array>(),
    open: async (o) => void opened.push(o),
    close: async () => {},
    getInfo: () => ({ usbVendorId: 0x1234, usbProductId: 0x0001 }),
  };
  const serial: WebSerialLike = {
    requestPort: async () => port,
    getPorts: async () => [port],
    addEventListener: (_t, l) => void listeners.add(l),
    removeEventListener: (_t, l) => void listeners.delete(l),
  };
  const unplug = (target: unknown) => [...listeners].forEach((l) => l({ target }));
  return { port, serial, opened, unplug, listeners };
}

describe('Web Serial link', () => {
  it('says Web Serial is missing outside a Chromium-family browser', () => {
    expect(serialSupported()).toBe(false); // Node has no navigator.serial
  });

  it('opens the port with the serial settings and exposes its streams only while open', async () => {
    const f = fakes();
    const link = wrapSerialPort(f.port, f.serial);
    expect(link.kind).toBe('serial');
    expect(link.readable).toBeNull();
    await link.open({
      baudRate: 115200,
      dataBits: 8,
      parity: 'none',
      stopBits: 1,
      flowControl: 'none',
    });
    expect(f.opened).toEqual([
      { baudRate: 115200, dataBits: 8, parity: 'none', stopBits: 1, flowControl: 'none' },
    ]);
    expect(link.readable).toBe(f.port.readable);
    expect(link.getInfo()).toEqual({ usbVendorId: 0x1234, usbProductId: 0x0001 });
    await link.close();
    expect(link.writable).toBeNull();
    expect(f.listeners.size).toBe(0);
  });

  it('reports its own port being unplugged, not other ports', async () => {
    const f = fakes();
    const link = wrapSerialPort(f.port, f.serial);
    const reasons: string[] = [];
    link.ondisconnect = (r) => reasons.push(r);
    await link.open({ baudRate: 9600 });
    f.unplug({});
    expect(reasons).toEqual([]);
    f.unplug(f.port);
    expect(reasons).toEqual(['serial port disconnected']);
    expect(link.readable).toBeNull();
  });
});
