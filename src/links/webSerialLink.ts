/**
 * Links over Web Serial (Chromium-family browsers, secure contexts). The browser shows its own
 * port chooser on `requestPort()`, which must run inside a user gesture (a click handler);
 * ports granted before come back from `getPorts()` without asking.
 */
import type { LinkInfo, SerialLink, SerialOpenOptions } from './SerialLink';

/** The part of Web Serial's `SerialPort` this module uses. */
export interface WebSerialPortLike {
  readonly readable: ReadableStream<Uint8Array> | null;
  readonly writable: WritableStream<Uint8Array> | null;
  open(options: SerialOpenOptions): Promise<void>;
  close(): Promise<void>;
  getInfo(): { usbVendorId?: number; usbProductId?: number };
}

/** The part of `navigator.serial` this module uses. */
export interface WebSerialLike {
  requestPort(options?: {
    filters?: { usbVendorId?: number; usbProductId?: number }[];
  }): Promise<WebSerialPortLike>;
  getPorts(): Promise<WebSerialPortLike[]>;
  addEventListener(type: 'disconnect', listener: (ev: { target: unknown }) => void): void;
  removeEventListener(type: 'disconnect', listener: (ev: { target: unknown }) => void): void;
}

function navigatorSerial(): WebSerialLike | null {
  const nav = (globalThis as { navigator?: { serial?: unknown } }).navigator;
  return nav && nav.serial ? (nav.serial as WebSerialLike) : null;
}

/** True when this browser offers Web Serial (Chromium-family, secure context). */
export function serialSupported(): boolean {
  return navigatorSerial() !== null;
}

/** Wraps a Web Serial port as a {@link SerialLink}. */
export function wrapSerialPort(
  port: WebSerialPortLike,
  serial: WebSerialLike | null = navigatorSerial(),
): SerialLink {
  let opened = false;
  const onDisconnect = (ev: { target: unknown }) => {
    if (ev.target !== port) return;
    serial?.removeEventListener('disconnect', onDisconnect);
    const was = opened;
    opened = false;
    if (was) link.ondisconnect?.('serial port disconnected');
  };
  const link: SerialLink = {
    kind: 'serial',
    get readable() {
      return opened ? port.readable : null;
    },
    get writable() {
      return opened ? port.writable : null;
    },
    async open(options) {
      await port.open(options);
      opened = true;
      serial?.addEventListener('disconnect', onDisconnect);
    },
    async close() {
      if (!opened) return;
      opened = false;
      serial?.removeEventListener('disconnect', onDisconnect);
      await port.close();
    },
    getInfo(): LinkInfo {
      return port.getInfo();
    },
    ondisconnect: null,
  };
  return link;
}

/** Asks the user to choose a port (call from a click handler). Rejects if they cancel. */
export async function requestSerialLink(
  filters?: { usbVendorId?: number; usbProductId?: number }[],
): Promise<SerialLink> {
  const serial = navigatorSerial();
  if (!serial) throw new Error('Web Serial is not available in this browser');
  return wrapSerialPort(await serial.requestPort(filters ? { filters } : undefined), serial);
}

/** Ports the user granted before, wrapped as links (empty without Web Serial). */
export async function grantedSerialLinks(): Promise<SerialLink[]> {
  const serial = navigatorSerial();
  if (!serial) return [];
  return (await serial.getPorts()).map((p) => wrapSerialPort(p, serial));
}
