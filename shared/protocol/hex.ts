/**
 * The SPI bridge's hex-transfer codec: one line of hex bytes per chip-select.
 *
 * Request:  `0B 00 00\n` — bytes clocked out on MOSI, in order, within one chip-select.
 * Reply:    `FF 12 34\n` — the bytes read back on MISO during the same clocks (same count),
 *           or `ERR <reason>` when the bridge refused the line.
 * Bytes are two upper-case hex digits separated by single spaces; decoding also accepts
 * lower case, extra spaces/tabs and commas.
 */

/** Longest transfer the bridge accepts in one chip-select, in bytes. */
export const HEX_MAX_BYTES = 64;

export type HexDecodeResult =
  | { ok: true; bytes: Uint8Array }
  | { ok: false; reason: 'empty' | 'bad-hex' | 'too-long' | 'device-error'; message: string };

/** Encodes bytes as a request line, e.g. [0x0b, 0, 0] → `"0B 00 00\n"`. */
export function encodeHexLine(bytes: ArrayLike<number>, terminator = '\n'): string {
  if (bytes.length === 0) throw new RangeError('a transfer needs at least one byte');
  if (bytes.length > HEX_MAX_BYTES)
    throw new RangeError(`at most ${HEX_MAX_BYTES} bytes per transfer`);
  const parts: string[] = [];
  for (let i = 0; i < bytes.length; i++) {
    const b = bytes[i];
    if (!Number.isInteger(b) || b < 0 || b > 255) throw new RangeError(`not a byte: ${b}`);
    parts.push(b.toString(16).toUpperCase().padStart(2, '0'));
  }
  return parts.join(' ') + terminator;
}

const TOKEN_RE = /^[0-9a-fA-F]{2}$/;

/**
 * Decodes one line (request or reply, terminator already removed) into bytes.
 * A reply starting with `ERR` is reported as `device-error` with the bridge's words.
 */
export function decodeHexLine(line: string, maxBytes = HEX_MAX_BYTES): HexDecodeResult {
  const text = line.trim();
  if (text === '') return { ok: false, reason: 'empty', message: 'empty line' };
  if (/^ERR\b/i.test(text)) {
    return { ok: false, reason: 'device-error', message: text.slice(3).trim() || 'error' };
  }
  const tokens = text.split(/[\s,]+/);
  if (tokens.length > maxBytes) {
    return { ok: false, reason: 'too-long', message: `more than ${maxBytes} bytes` };
  }
  const bytes = new Uint8Array(tokens.length);
  for (let i = 0; i < tokens.length; i++) {
    if (!TOKEN_RE.test(tokens[i])) {
      return {
        ok: false,
        reason: 'bad-hex',
        message: `byte ${i + 1} is not two hex digits: "${tokens[i].slice(0, 8)}"`,
      };
    }
    bytes[i] = parseInt(tokens[i], 16);
  }
  return { ok: true, bytes };
}

/** Reads a 16-bit two's-complement value at `offset`, little-endian unless `bigEndian`. */
export function readInt16(bytes: Uint8Array, offset: number, bigEndian = false): number {
  if (offset < 0 || offset + 1 >= bytes.length) throw new RangeError('offset outside the reply');
  const lo = bigEndian ? bytes[offset + 1] : bytes[offset];
  const hi = bigEndian ? bytes[offset] : bytes[offset + 1];
  const u = (hi << 8) | lo;
  return u >= 0x8000 ? u - 0x10000 : u;
}
