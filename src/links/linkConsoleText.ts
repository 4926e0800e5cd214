/**
 * Pure helpers of the link test page: raw byte rendering, line splitting, bounded buffers, SPI
 * transfer decoding for the simulated accelerometer, value formatting and simulator targets.
 */
import { decodeHexLine } from '../../shared/protocol/hex';
import type { LinkProfile } from '../../shared/protocol/linkProfile';

/** One raw line as shown: direction, seconds since connect, hex and printable text. */
export interface RawLine {
  id: number;
  dir: 'rx' | 'tx';
  t: number;
  hex: string;
  text: string;
  /** Shown before its terminator arrived (the device paused mid-line). */
  partial: boolean;
}

const CONTROL_GLYPHS: Record<number, string> = { 0x0d: '\u240D', 0x0a: '\u240A', 0x09: '\u2409', 0x00: '\u2400', 0x1b: '\u241B' };

/**
 * Bytes as the raw view shows them: `2B 31 0D 0A` and `+1␍␊`. CR, LF, TAB, NUL and ESC become
 * their control-picture symbols; any other byte outside printable ASCII becomes a middle dot.
 */
export function renderBytes(bytes: Uint8Array): { hex: string; text: string } {
  const hex: string[] = [];
  let text = '';
  for (const b of bytes) {
    hex.push(b.toString(16).toUpperCase().padStart(2, '0'));
    text += b >= 0x20 && b <= 0x7e ? String.fromCharCode(b) : (CONTROL_GLYPHS[b] ?? '\u00B7');
  }
  return { hex: hex.join(' '), text };
}

/**
 * Cuts a byte stream into display lines, terminators kept: a line ends after LF, after a CR not
 * followed by LF, or at `maxBytes`. Unlike the parsing framer it drops nothing, so the raw view
 * shows exactly what arrived.
 */
export function createRawSplitter(maxBytes = 48) {
  let pending: number[] = [];
  let crWaiting = false; // the last byte was CR: its line ends unless LF follows
  return {
    push(chunk: Uint8Array): Uint8Array[] {
      const out: Uint8Array[] = [];
      for (const b of chunk) {
        if (crWaiting) {
          crWaiting = false;
          if (b === 0x0a) {
            pending.push(b);
            out.push(Uint8Array.from(pending));
            pending = [];
            continue;
          }
          out.push(Uint8Array.from(pending));
          pending = [];
        }
        pending.push(b);
        if (b === 0x0d) crWaiting = true;
        else if (b === 0x0a || pending.length >= maxBytes) {
          out.push(Uint8Array.from(pending));
          pending = [];
        }
      }
      return out;
    },
    /** Whatever is waiting (a line without its terminator yet), or null. */
    flush(): Uint8Array | null {
      crWaiting = false;
      if (pending.length === 0) return null;
      const rest = Uint8Array.from(pending);
      pending = [];
      return rest;
    },
  };
}

/** Keeps the last `capacity` items pushed; trims in batches so pushing stays cheap. */
export function createBoundedBuffer<T>(capacity: number) {
  let items: T[] = [];
  return {
    push(...more: T[]): void {
      items.push(...more);
      if (items.length > capacity * 1.5) items = items.slice(items.length - capacity);
    },
    toArray(): T[] {
      return items.length > capacity ? items.slice(items.length - capacity) : items.slice();
    },
    get size(): number {
      return Math.min(items.length, capacity);
    },
    clear(): void {
      items = [];
    },
  };
}

/** Registers of Driftbench's simulated accelerometer (simulators/README.md). */
export const ACCEL_REGISTERS: Record<number, string> = {
  0x00: 'IDENT',
  0x01: 'REVISION',
  0x10: 'CTRL',
  0x11: 'STATUS',
  0x12: 'SCRATCH',
  0x20: 'OUT_X_L',
  0x21: 'OUT_X_H',
  0x22: 'OUT_Y_L',
  0x23: 'OUT_Y_H',
  0x24: 'OUT_Z_L',
  0x25: 'OUT_Z_H',
};

/** Digits per g for a CTRL value's RANGE bits: ±2 g 16000, ±4 g 8000, ±8 g (and reserved) 4000. */
export function digitsPerG(ctrl: number): number {
  const range = (ctrl >> 1) & 0b11;
  return range === 0 ? 16000 : range === 1 ? 8000 : 4000;
}

export interface SpiDecoded {
  read: boolean;
  autoIncrement: boolean;
  address: number;
  /** Each data byte with the register it addressed. */
  bytes: { register: number; name: string; mosi: number; miso: number }[];
  /** Axes whose low and high bytes were both read: raw digits and g. */
  axes: { axis: 'X' | 'Y' | 'Z'; digits: number; g: number }[];
  /** The CTRL value this transfer wrote or read, if it touched CTRL. */
  ctrl?: number;
}

/**
 * Decodes one transfer by the register map: address byte (bit 7 read, bit 6 auto-increment,
 * bits 5–0 register), then one register per data byte; X/Y/Z are 16-bit two's complement,
 * little-endian, scaled by the range in `ctrl` (default ±2 g).
 */
export function decodeSpiTransfer(mosi: Uint8Array, miso: Uint8Array, ctrl = 0): SpiDecoded {
  const head = mosi[0] ?? 0;
  const read = (head & 0x80) !== 0;
  const autoIncrement = (head & 0x40) !== 0;
  const address = head & 0x3f;
  const bytes: SpiDecoded['bytes'] = [];
  const seen = new Map<number, number>();
  let ctrlSeen: number | undefined;
  for (let i = 1; i < mosi.length; i++) {
    const register = autoIncrement ? (address + i - 1) & 0x3f : address;
    const value = read ? (miso[i] ?? 0) : mosi[i];
    bytes.push({ register, name: ACCEL_REGISTERS[register] ?? '—', mosi: mosi[i], miso: miso[i] ?? 0 });
    if (read) seen.set(register, value);
    if (register === 0x10) ctrlSeen = value;
  }
  const scale = digitsPerG(ctrlSeen ?? ctrl);
  const axes: SpiDecoded['axes'] = [];
  (['X', 'Y', 'Z'] as const).forEach((axis, k) => {
    const lo = seen.get(0x20 + 2 * k);
    const hi = seen.get(0x21 + 2 * k);
    if (lo === undefined || hi === undefined) return;
    const u = (hi << 8) | lo;
    const digits = u >= 0x8000 ? u - 0x10000 : u;
    axes.push({ axis, digits, g: digits / scale });
  });
  return { read, autoIncrement, address, bytes, axes, ctrl: ctrlSeen };
}

/** Hex bytes typed by a person: `A0 00`, `a0,00`, `0xA0 0x00` → bytes, or a message. */
export function parseHexInput(text: string): { ok: true; bytes: Uint8Array } | { ok: false; message: string } {
  const cleaned = text.replace(/0x/gi, ' ');
  const d = decodeHexLine(cleaned);
  if (d.ok) return d;
  return { ok: false, message: d.reason === 'empty' ? 'enter at least one byte, e.g. C0 00 00' : d.message };
}

/**
 * A reading's value with the whole part grouped by thin spaces: about 13 significant digits
 * (what a counter prints, 16000051.23456 → "16 000 051.23456"), or fixed `decimals` when the
 * resolution is known (an SPI value in steps of 0.0625 mg needs 4).
 */
export function formatReadingValue(value: number, decimals?: number, significant = 13): string {
  if (!Number.isFinite(value)) return '—';
  const magnitude = value === 0 ? 0 : Math.floor(Math.log10(Math.abs(value)));
  const places = decimals ?? Math.min(9, Math.max(0, significant - 1 - magnitude));
  const [whole, fraction] = Math.abs(value).toFixed(places).split('.');
  const grouped = whole.replace(/\B(?=(\d{3})+(?!\d))/g, '\u2009');
  return `${value < 0 ? '\u2212' : ''}${grouped}${fraction ? `.${fraction}` : ''}`;
}

/** Decimals that show a profile's resolution: a hex-spi scale's own (0.0625 → 4); else none fixed. */
export function readingDecimals(profile: Pick<LinkProfile, 'parseRule' | 'hexSpi'>): number | undefined {
  if (profile.parseRule !== 'hex-spi' || !profile.hexSpi) return undefined;
  const text = String(profile.hexSpi.scale);
  const dot = text.indexOf('.');
  return dot < 0 || text.includes('e') ? 0 : Math.min(6, text.length - dot - 1);
}

/** The simulated devices the link page offers. */
export type SimDevice = 'counter-talk' | 'counter-query' | 'spi-bridge';

/** What the link page's "Link" panel is set to. */
export interface LinkSourceConfig {
  source: 'simulator' | 'serial';
  device: SimDevice;
  /** Counter DUT preset (simulators/README.md): xtal-16m, osc-25m, tf-32k, tcxo-12m8. */
  counterPreset: string;
  checkpoint: number;
  /** Simulated seconds per wall-clock second. */
  accel: number;
  gate: number;
  /** Fraction of corrupted counter lines. */
  garble: number;
  orientation: string;
}

/** The simulator hub path and query parameters for a link-page setting. */
export function simulatorTarget(c: LinkSourceConfig): { path: '/sim/counter' | '/sim/spi-bridge'; params: Record<string, string> } {
  if (c.device === 'spi-bridge') {
    return { path: '/sim/spi-bridge', params: { preset: 'accel', checkpoint: String(c.checkpoint), orientation: c.orientation, accel: String(c.accel) } };
  }
  return {
    path: '/sim/counter',
    params: {
      mode: c.device === 'counter-talk' ? 'talk' : 'query',
      preset: c.counterPreset,
      checkpoint: String(c.checkpoint),
      accel: String(c.accel),
      gate: String(c.gate),
      garble: String(c.garble),
    },
  };
}

/** The link preset that fits a simulated device. */
export function presetForDevice(device: SimDevice): 'talk-counter' | 'scpi-counter' | 'spi-bridge' {
  return device === 'counter-talk' ? 'talk-counter' : device === 'counter-query' ? 'scpi-counter' : 'spi-bridge';
}
