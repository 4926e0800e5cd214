/**
 * A link to an instrument, in the shape of Web Serial's `SerialPort`, so the bench reads and
 * writes bytes the same way whether they come from `navigator.serial` or from the simulator
 * over WebSocket. Types are declared here (not taken from the DOM's Web Serial typings) so that
 * this folder also type-checks and runs in Node tests.
 */

/** The options of `SerialPort.open()` (a subset of Web Serial's `SerialOptions`). */
export interface SerialOpenOptions {
  baudRate: number;
  dataBits?: 7 | 8;
  stopBits?: 1 | 2;
  parity?: 'none' | 'even' | 'odd';
  bufferSize?: number;
  flowControl?: 'none' | 'hardware';
}

/** What a link says about itself: USB ids for serial ports, the URL for the simulator. */
export interface LinkInfo {
  usbVendorId?: number;
  usbProductId?: number;
  simulatorUrl?: string;
}

export type LinkKind = 'serial' | 'simulator';

export interface SerialLink {
  readonly kind: LinkKind;
  /** Bytes from the instrument; null until `open()` resolves and after `close()`. */
  readonly readable: ReadableStream<Uint8Array> | null;
  /** Bytes to the instrument; null until `open()` resolves and after `close()`. */
  readonly writable: WritableStream<Uint8Array> | null;
  open(options: SerialOpenOptions): Promise<void>;
  close(): Promise<void>;
  getInfo(): LinkInfo;
  /** Called once when the link drops without `close()` (cable pulled, simulator gone). */
  ondisconnect: ((reason: string) => void) | null;
}

/** Web Serial settings from a link profile's serial block. */
export function serialOptions(s: {
  baudRate: number;
  dataBits: 7 | 8;
  parity: 'none' | 'even' | 'odd';
  stopBits: 1 | 2;
  flowControl: 'none' | 'hardware';
}): SerialOpenOptions {
  return {
    baudRate: s.baudRate,
    dataBits: s.dataBits,
    parity: s.parity,
    stopBits: s.stopBits,
    flowControl: s.flowControl,
  };
}
