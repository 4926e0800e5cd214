/**
 * Driftbench's simulated SPI bridge: a serial-line device that takes one line of hex bytes,
 * clocks them out on MOSI within one chip-select, and answers with the MISO bytes as a hex
 * line. `*IDN?` identifies the bridge; refused lines are answered `ERR <reason>`.
 */
import { createLineFramer } from '../shared/protocol/framing';
import { decodeHexLine, encodeHexLine, HEX_MAX_BYTES } from '../shared/protocol/hex';

export const BRIDGE_IDN = 'Driftbench Labs,SIM-SPI-1';

/** Anything on the far side of the bridge: one chip-select per call. */
export interface SpiDevice {
  transfer(mosi: Uint8Array): Uint8Array;
}

export class SimSpiBridge {
  onData: (bytes: Uint8Array) => void = () => {};
  private readonly framer = createLineFramer({
    terminator: 'auto',
    maxLine: HEX_MAX_BYTES * 3 + 16,
  });
  private readonly enc = new TextEncoder();
  private stopped = false;

  constructor(
    private readonly device: SpiDevice,
    private readonly serial = 'SN00001',
  ) {}

  /** Bytes arriving on the bridge's RX line. */
  write(bytes: Uint8Array): void {
    if (this.stopped) return;
    for (const frame of this.framer.push(bytes))
      this.reply(this.handle(frame.text, frame.flags !== 0));
  }

  stop(): void {
    this.stopped = true;
  }

  /** Answers one request line (without terminator). */
  handle(line: string, flagged = false): string {
    if (line.trim().toUpperCase() === '*IDN?') return `${BRIDGE_IDN},${this.serial},1.0.0`;
    if (flagged) return 'ERR bad hex';
    const d = decodeHexLine(line);
    if (!d.ok) {
      if (d.reason === 'too-long') return `ERR too long (max ${HEX_MAX_BYTES} bytes)`;
      if (d.reason === 'empty') return 'ERR empty';
      return 'ERR bad hex';
    }
    return encodeHexLine(this.device.transfer(d.bytes), '');
  }

  private reply(text: string): void {
    if (!this.stopped) this.onData(this.enc.encode(text + '\n'));
  }
}
