/**
 * Pure helpers of the link test page: raw byte rendering, line splitting, bounded buffers, SPI
 * transfer decoding for the simulated accelerometer, value formatting and simulator targets.
 */
import { decodeHexLine, readInt16 } from '../../shared/protocol/hex';
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

const CONTROL_GLYPHS: Record<number, string> = {
  0x0d: '\u240D',
  0x0a: '\u240A',
  0x09: '\u2409',
  0x00: '\u2400',
  0x1b: '\u241B',
};

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

/**
 * The value a hex-spi link profile reads out of one transfer's MISO bytes: the 16-bit two's
 * complement field at the profile's offset and byte order, times its scale. The console stays
 * generic — it knows no device's registers, only what the link profile says about the value.
 */
export function decodeValueField(
  miso: Uint8Array,
  field: { offset: number; bigEndian: boolean; scale: number } | undefined,
): { digits: number; value: number } | null {
  if (!field || field.offset < 0 || field.offset + 1 >= miso.length) return null;
  const digits = readInt16(miso, field.offset, field.bigEndian);
  return { digits, value: digits * field.scale };
}

/** Hex bytes typed by a person: `A0 00`, `a0,00`, `0xA0 0x00` → bytes, or a message. */
export function parseHexInput(
  text: string,
): { ok: true; bytes: Uint8Array } | { ok: false; message: string } {
  const cleaned = text.replace(/0x/gi, ' ');
  const d = decodeHexLine(cleaned);
  if (d.ok) return d;
  return {
    ok: false,
    message: d.reason === 'empty' ? 'enter at least one byte, e.g. 03 00 00' : d.message,
  };
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
export function readingDecimals(
  profile: Pick<LinkProfile, 'parseRule' | 'hexSpi'>,
): number | undefined {
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
export function simulatorTarget(c: LinkSourceConfig): {
  path: '/sim/counter' | '/sim/spi-bridge';
  params: Record<string, string>;
} {
  if (c.device === 'spi-bridge') {
    return {
      path: '/sim/spi-bridge',
      params: {
        preset: 'accel',
        checkpoint: String(c.checkpoint),
        orientation: c.orientation,
        accel: String(c.accel),
      },
    };
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
  return device === 'counter-talk'
    ? 'talk-counter'
    : device === 'counter-query'
      ? 'scpi-counter'
      : 'spi-bridge';
}
