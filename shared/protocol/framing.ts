/**
 * Streaming line framing for instrument links: bytes in (in chunks of any size), lines out.
 *
 * Serial ports deliver bytes in arbitrary chunks, so a terminator may arrive split across two
 * chunks, a line may arrive in many pieces, and a noisy line may carry stray bytes. The framer
 * is a pure state machine over bytes: the frames it returns never depend on how the stream was
 * chunked (tested as a property over every split).
 */

/** `auto` ends a line at CR, LF or CR LF (CR LF counting once); any other string is literal. */
export type Terminator = 'CR' | 'LF' | 'CRLF' | 'auto' | (string & {});

/** Bits of {@link Frame.flags}. */
export const FrameFlag = {
  none: 0,
  /** The line held bytes outside printable ASCII (shown as U+FFFD in `text`). */
  garbage: 1 << 0,
  /** The line exceeded `maxLine` bytes: `text` holds the first `maxLine`, the rest was dropped. */
  overlong: 1 << 1,
  /** The stream ended (flush) before the line's terminator arrived. */
  partial: 1 << 2,
} as const;

export interface Frame {
  /** The line without its terminator, bytes 0x20–0x7E and TAB as-is, others as U+FFFD. */
  text: string;
  /** The line's raw bytes without the terminator (cut at `maxLine` when overlong). */
  bytes: Uint8Array;
  flags: number;
}

export interface LineFramerOptions {
  terminator: Terminator;
  /** Longest line kept, in bytes (default 4096). */
  maxLine?: number;
  /** Emit empty lines too (default false: empty lines, e.g. from LF CR pairs, are skipped). */
  keepEmpty?: boolean;
}

export interface LineFramer {
  /** Feed one chunk; returns the lines it completed, in order. */
  push(chunk: Uint8Array): Frame[];
  /** End of stream: returns the unterminated remainder as a `partial` frame, if any. */
  flush(): Frame[];
}

const CR = 0x0d;
const LF = 0x0a;

/** Bytes of a terminator: `CR` → [0x0d], `LF` → [0x0a], `CRLF` → [0x0d, 0x0a], else the string's UTF-8. */
export function terminatorBytes(terminator: Exclude<Terminator, 'auto'>): Uint8Array {
  if (terminator === 'CR') return Uint8Array.of(CR);
  if (terminator === 'LF') return Uint8Array.of(LF);
  if (terminator === 'CRLF') return Uint8Array.of(CR, LF);
  if (terminator.length === 0) throw new RangeError('terminator must not be empty');
  return new TextEncoder().encode(terminator);
}

function isPrintable(b: number): boolean {
  return (b >= 0x20 && b <= 0x7e) || b === 0x09;
}

/** Decodes a line as ASCII, marking every other byte as U+FFFD. */
export function frameText(bytes: Uint8Array): { text: string; garbage: boolean } {
  let text = '';
  let garbage = false;
  for (const b of bytes) {
    if (isPrintable(b)) text += String.fromCharCode(b);
    else {
      text += '\uFFFD';
      garbage = true;
    }
  }
  return { text, garbage };
}

/** Creates a streaming line framer (see the module comment). */
export function createLineFramer(options: LineFramerOptions): LineFramer {
  const maxLine = options.maxLine ?? 4096;
  if (!(maxLine >= 1)) throw new RangeError('maxLine must be at least 1');
  const auto = options.terminator === 'auto';
  const term = auto ? new Uint8Array(0) : terminatorBytes(options.terminator);
  const keepEmpty = options.keepEmpty ?? false;

  // The line in progress plus up to term.length − 1 bytes that may start a terminator.
  let buf = new Uint8Array(Math.min(maxLine + term.length, 256));
  let len = 0;
  let overlong = false; // the current line passed maxLine: drop bytes until its terminator
  let lastWasCR = false; // auto mode: swallow the LF of a CR LF pair, even across chunks

  function append(b: number): void {
    if (len === buf.length) {
      const next = new Uint8Array(buf.length * 2);
      next.set(buf);
      buf = next;
    }
    buf[len++] = b;
  }

  function emit(out: Frame[], lineLen: number, extraFlags: number): void {
    const bytes = buf.slice(0, Math.min(lineLen, maxLine));
    const { text, garbage } = frameText(bytes);
    const flags =
      extraFlags | (garbage ? FrameFlag.garbage : 0) | (overlong ? FrameFlag.overlong : 0);
    if (bytes.length > 0 || keepEmpty || flags !== 0) out.push({ text, bytes, flags });
    len = 0;
    overlong = false;
  }

  function endsWithTerm(): boolean {
    if (len < term.length) return false;
    for (let i = 0; i < term.length; i++) if (buf[len - term.length + i] !== term[i]) return false;
    return true;
  }

  function pushByte(b: number, out: Frame[]): void {
    if (auto) {
      if (b === LF && lastWasCR) {
        lastWasCR = false;
        return;
      }
      lastWasCR = b === CR;
      if (b === CR || b === LF) {
        emit(out, len, 0);
        return;
      }
      if (overlong) return;
      append(b);
    } else {
      append(b);
      if (endsWithTerm()) {
        emit(out, len - term.length, 0);
        return;
      }
      if (!overlong) {
        if (len <= maxLine + term.length - 1) return;
        overlong = true; // keep maxLine bytes plus a possible terminator prefix
      }
      // Overlong: keep the first maxLine bytes and a sliding tail long enough to spot the
      // terminator; drop what lies between.
      const tail = term.length - 1;
      if (len > maxLine + tail) {
        buf.copyWithin(maxLine, len - tail, len);
        len = maxLine + tail;
      }
      return;
    }
    if (len > maxLine) {
      overlong = true;
      len = maxLine;
    }
  }

  return {
    push(chunk: Uint8Array): Frame[] {
      const out: Frame[] = [];
      for (const b of chunk) pushByte(b, out);
      return out;
    },
    flush(): Frame[] {
      const out: Frame[] = [];
      if (len > 0 || overlong) emit(out, len, FrameFlag.partial);
      lastWasCR = false;
      return out;
    },
  };
}
