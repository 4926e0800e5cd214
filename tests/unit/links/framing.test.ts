import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  createLineFramer,
  FrameFlag,
  type Frame,
  type Terminator,
} from '../../../shared/protocol/framing';

const enc = new TextEncoder();
const bytes = (s: string) => enc.encode(s);

function frameAll(terminator: Terminator, chunks: Uint8Array[], maxLine?: number): Frame[] {
  const f = createLineFramer({ terminator, maxLine });
  const out: Frame[] = [];
  for (const c of chunks) out.push(...f.push(c));
  out.push(...f.flush());
  return out;
}

/** Cuts `data` at the given sorted cut points. */
function split(data: Uint8Array, cuts: number[]): Uint8Array[] {
  const pts = [...new Set(cuts.map((c) => c % (data.length + 1)))].sort((a, b) => a - b);
  const out: Uint8Array[] = [];
  let prev = 0;
  for (const p of pts) {
    out.push(data.slice(prev, p));
    prev = p;
  }
  out.push(data.slice(prev));
  return out;
}

const simplify = (fs: Frame[]) =>
  fs.map((f) => ({ text: f.text, bytes: Array.from(f.bytes), flags: f.flags }));

// Streams mixing readings, every terminator style, garbage bytes and long lines.
const streamArb = fc
  .array(
    fc.oneof(
      fc.constantFrom('+1.600001234567E+07', '32768.0021 Hz', 'FF 12 34', '-12.5 mg', ''),
      fc.constantFrom('\r', '\n', '\r\n', '\n\r'),
      fc.uint8Array({ minLength: 1, maxLength: 6 }).map((b) => String.fromCharCode(...b)),
      fc.string({ maxLength: 40 }),
    ),
    { maxLength: 30 },
  )
  .map((parts) => Uint8Array.from(parts.join(''), (c) => c.charCodeAt(0) & 0xff));

describe('line framer', () => {
  it.each(['auto', 'CRLF', 'LF', 'CR', ';;'] as const)(
    'gives the same frames for every split of a stream into chunks (%s)',
    (terminator) => {
      fc.assert(
        fc.property(
          streamArb,
          fc.array(fc.nat(), { maxLength: 12 }),
          fc.integer({ min: 4, max: 64 }),
          (data, cuts, maxLine) => {
            const whole = frameAll(terminator, [data], maxLine);
            const pieces = frameAll(terminator, split(data, cuts), maxLine);
            const bytewise = frameAll(
              terminator,
              Array.from(data, (b) => Uint8Array.of(b)),
              maxLine,
            );
            expect(simplify(pieces)).toEqual(simplify(whole));
            expect(simplify(bytewise)).toEqual(simplify(whole));
          },
        ),
        { numRuns: 300 },
      );
    },
  );

  it('joins a CR LF split across two chunks into one terminator in auto mode', () => {
    const f = createLineFramer({ terminator: 'auto' });
    expect(f.push(bytes('+1.6E+07\r')).map((x) => x.text)).toEqual(['+1.6E+07']);
    expect(f.push(bytes('\n+1.7E+07\r\n')).map((x) => x.text)).toEqual(['+1.7E+07']);
    expect(f.flush()).toEqual([]);
  });

  it('ends lines at CR, LF or CR LF in auto mode', () => {
    const texts = frameAll('auto', [bytes('a\rb\nc\r\nd\n\re')]).map((x) => x.text);
    expect(texts).toEqual(['a', 'b', 'c', 'd', 'e']);
  });

  it('finds a multi-byte terminator split across chunks', () => {
    const texts = frameAll('CRLF', [bytes('12.5 mg\r'), bytes('\n13'), bytes('.0 mg\r\n')]).map(
      (x) => x.text,
    );
    expect(texts).toEqual(['12.5 mg', '13.0 mg']);
  });

  it('flags garbage bytes without stopping the stream', () => {
    const frames = frameAll('LF', [Uint8Array.of(0x2b, 0x31, 0x00, 0xfe, 0x0a), bytes('+2\n')]);
    expect(frames).toHaveLength(2);
    expect(frames[0].flags & FrameFlag.garbage).toBeTruthy();
    expect(frames[0].text).toBe('+1\uFFFD\uFFFD');
    expect(frames[1]).toMatchObject({ text: '+2', flags: 0 });
  });

  it('cuts overlong lines, flags them and resynchronises at the next terminator', () => {
    const frames = frameAll('LF', [bytes('x'.repeat(50) + '\nok\n')], 16);
    expect(frames[0].text).toBe('x'.repeat(16));
    expect(frames[0].flags & FrameFlag.overlong).toBeTruthy();
    expect(frames[1]).toMatchObject({ text: 'ok', flags: 0 });
  });

  it('returns an unterminated tail from flush as a partial line', () => {
    const f = createLineFramer({ terminator: 'CRLF' });
    expect(f.push(bytes('+1.60000'))).toEqual([]);
    const [tail] = f.flush();
    expect(tail.text).toBe('+1.60000');
    expect(tail.flags & FrameFlag.partial).toBeTruthy();
  });
});
