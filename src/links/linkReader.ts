/**
 * Reads any {@link SerialLink} as a stream of numbered, timestamped readings: bytes → lines
 * (framer) → numbers (parser), either as the instrument streams them (talk-only) or by polling
 * it with the profile's query (SCPI `READ?`, or a hex line for the SPI bridge).
 *
 * Bad lines never stop a capture: they are reported through `onIssue` and, with
 * `keepInvalid`, also yielded as NaN readings carrying the reason in `flags`.
 * The reader holds the link's stream locks while it runs and releases them when the
 * generator ends (abort the signal, or `return()` the generator), so the link can be closed.
 */
import { createLineFramer, FrameFlag, type Frame } from '../../shared/protocol/framing';
import { parseMeasurement, fromBaseUnit } from '../../shared/protocol/parse';
import { decodeHexLine, readInt16 } from '../../shared/protocol/hex';
import { createLineQueue, createScpiClient, type LineQueue } from '../../shared/protocol/scpi';
import { ReadingFlag, type LinkReading } from '../../shared/protocol/reading';
import type { LinkProfile } from '../../shared/protocol/linkProfile';
import type { SerialLink } from './SerialLink';

export interface LinkIssue {
  kind: 'garbled' | 'timeout' | 'overrange' | 'device-error';
  /** Seconds since the reader started. */
  t: number;
  raw: string;
  message: string;
}

export interface LinkReaderOptions {
  profile: LinkProfile;
  signal?: AbortSignal;
  /** Milliseconds clock (default performance.now). */
  now?: () => number;
  /** First sequence number (default 0; a resumed capture continues its numbering). */
  startSeq?: number;
  /** Also yield invalid lines and failed polls as NaN readings with flags (default false). */
  keepInvalid?: boolean;
  onIssue?: (issue: LinkIssue) => void;
  /** Every framed line as received (for the link console). */
  onLine?: (text: string) => void;
}

export type LineParse =
  | { ok: true; value: number; flags: number }
  | { ok: false; kind: LinkIssue['kind']; flags: number; message: string };

/** Turns one framed line into a value in the profile's unit, per its parse rule. */
export function parseLine(frame: Frame, profile: LinkProfile): LineParse {
  let flags = 0;
  if (frame.flags & FrameFlag.overlong) flags |= ReadingFlag.overlong;
  if (frame.flags & FrameFlag.partial) flags |= ReadingFlag.partial;
  if (frame.flags & FrameFlag.garbage) flags |= ReadingFlag.garbled;
  if (flags !== 0) {
    return {
      ok: false,
      kind: 'garbled',
      flags: flags | ReadingFlag.garbled,
      message: 'damaged line',
    };
  }
  if (profile.parseRule === 'hex-spi') {
    const d = decodeHexLine(frame.text);
    if (!d.ok) {
      const kind = d.reason === 'device-error' ? 'device-error' : 'garbled';
      return { ok: false, kind, flags: ReadingFlag.garbled, message: d.message };
    }
    const f = profile.hexSpi!;
    if (f.offset + 1 >= d.bytes.length) {
      return {
        ok: false,
        kind: 'garbled',
        flags: ReadingFlag.garbled,
        message: 'reply shorter than the value field',
      };
    }
    return { ok: true, value: readInt16(d.bytes, f.offset, f.bigEndian) * f.scale, flags: 0 };
  }
  // A bare number is already in the profile's unit; a number with a unit is converted to it.
  let r = parseMeasurement(frame.text, { allowUnit: false });
  let converted = false;
  if (!r.ok && r.reason === 'unit-not-allowed' && profile.parseRule === 'number-with-unit') {
    r = parseMeasurement(frame.text, { quantity: profile.quantity });
    converted = true;
  }
  if (!r.ok) {
    if (r.reason === 'overrange')
      return { ok: false, kind: 'overrange', flags: ReadingFlag.overrange, message: r.message };
    return { ok: false, kind: 'garbled', flags: ReadingFlag.garbled, message: r.message };
  }
  try {
    return { ok: true, value: converted ? fromBaseUnit(r.value, profile.unit) : r.value, flags: 0 };
  } catch {
    return {
      ok: false,
      kind: 'garbled',
      flags: ReadingFlag.garbled,
      message: `cannot express in ${profile.unit}`,
    };
  }
}

const TERMINATOR_TEXT = { CR: '\r', LF: '\n', CRLF: '\r\n' } as const;

/** A link's lines and writer, held for one session of reading (see {@link openLines}). */
export interface LinkLines {
  lines: LineQueue;
  /** Writes bytes to the link (throws if the link cannot be written to). */
  write(bytes: Uint8Array): Promise<void>;
  /** Stops reading and releases the link's stream locks, so it can be read again or closed. */
  release(): Promise<void>;
}

/**
 * Locks the link's streams and frames what it reads into a line queue. The caller must
 * `release()` when done.
 */
export function openLines(
  link: SerialLink,
  terminator: LinkProfile['terminator'],
  onLine?: (text: string) => void,
): LinkLines {
  if (!link.readable) throw new Error('the link is not open');
  const reader = link.readable.getReader();
  const lines = createLineQueue();
  const pump = pumpLines(reader, createLineFramer({ terminator }), lines, onLine);
  let writer: WritableStreamDefaultWriter<Uint8Array> | null = null;
  return {
    lines,
    write(bytes) {
      if (!writer) {
        if (!link.writable) return Promise.reject(new Error('the link cannot be written to'));
        writer = link.writable.getWriter();
      }
      return writer.write(bytes);
    },
    async release() {
      lines.close();
      try {
        reader.releaseLock(); // a pending read rejects; the pump ends
      } catch {
        // an older stream implementation: leave the lock, the link's close() will end it
      }
      await pump;
      writer?.releaseLock();
      writer = null;
    },
  };
}

/** An SCPI client on a link, with the profile's terminators, timeout and retries. */
export function openScpi(link: SerialLink, profile: LinkProfile, onLine?: (text: string) => void) {
  const io = openLines(link, profile.terminator, onLine);
  const client = createScpiClient(
    { write: io.write, lines: io.lines },
    {
      writeTerminator: TERMINATOR_TEXT[profile.writeTerminator],
      timeoutMs: profile.timeoutMs,
      retries: profile.retries,
    },
  );
  return { client, lines: io.lines, release: io.release };
}

/** Reads the link until aborted or closed, yielding readings (see the module comment). */
export async function* readLink(
  link: SerialLink,
  options: LinkReaderOptions,
): AsyncGenerator<LinkReading> {
  const { profile, signal } = options;
  const now = options.now ?? (() => performance.now());
  const start = now();
  const elapsed = () => (now() - start) / 1000;
  let seq = options.startSeq ?? 0;

  const { client, lines, release } = openScpi(link, profile, options.onLine);
  const stop = () => lines.close();
  signal?.addEventListener('abort', stop, { once: true });
  const issue = (kind: LinkIssue['kind'], raw: string, message: string) =>
    options.onIssue?.({ kind, t: elapsed(), raw, message });

  try {
    if (profile.mode === 'talk') {
      while (!signal?.aborted) {
        const frame = await lines.next(profile.timeoutMs);
        if (!frame) {
          if (lines.closed) break;
          issue('timeout', '', `no line for ${profile.timeoutMs} ms`);
          continue;
        }
        const p = parseLine(frame, profile);
        if (p.ok)
          yield { seq: seq++, t: elapsed(), value: p.value, flags: p.flags, raw: frame.text };
        else {
          issue(p.kind, frame.text, p.message);
          if (options.keepInvalid)
            yield { seq: seq++, t: elapsed(), value: NaN, flags: p.flags, raw: frame.text };
        }
      }
      return;
    }

    for (const cmd of profile.initCommands) {
      const expectsReply = profile.parseRule === 'hex-spi' || cmd.includes('?');
      if (expectsReply) await client.query(cmd, { accept: () => true });
      else await client.send(cmd);
    }
    const accept = (f: Frame) => {
      const p = parseLine(f, profile);
      return p.ok || p.kind === 'overrange';
    };
    for await (const r of client.poll(profile.queryCommand, {
      intervalMs: profile.intervalMs,
      signal,
      accept,
      now,
    })) {
      const discarded = r.discarded;
      if (r.frame) {
        for (const raw of discarded) issue('garbled', raw, 'discarded before a good reply');
        const p = parseLine(r.frame, profile);
        if (p.ok)
          yield { seq: seq++, t: elapsed(), value: p.value, flags: p.flags, raw: r.frame.text };
        else {
          issue(p.kind, r.frame.text, p.message);
          if (options.keepInvalid)
            yield { seq: seq++, t: elapsed(), value: NaN, flags: p.flags, raw: r.frame.text };
        }
      } else {
        for (const raw of discarded) issue('garbled', raw, 'unusable reply');
        issue('timeout', '', r.error?.message ?? 'no reply');
        if (options.keepInvalid) {
          const flags = ReadingFlag.timeout | (discarded.length > 0 ? ReadingFlag.garbled : 0);
          yield { seq: seq++, t: elapsed(), value: NaN, flags };
        }
      }
    }
  } finally {
    signal?.removeEventListener('abort', stop);
    await release();
  }
}

async function pumpLines(
  reader: ReadableStreamDefaultReader<Uint8Array>,
  framer: ReturnType<typeof createLineFramer>,
  lines: LineQueue,
  onLine?: (text: string) => void,
): Promise<void> {
  try {
    for (;;) {
      const { value, done } = await reader.read();
      if (done) break;
      for (const f of framer.push(value)) {
        onLine?.(f.text);
        lines.push(f);
      }
    }
    for (const f of framer.flush()) {
      onLine?.(f.text);
      lines.push(f);
    }
  } catch {
    // released or errored: the reader is over
  } finally {
    lines.close();
  }
}
