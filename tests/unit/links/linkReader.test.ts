/** The link reader over a scripted in-memory link. */
import { describe, expect, it } from 'vitest';
import { parseLine, readLink } from '../../../src/links/linkReader';
import type { SerialLink } from '../../../src/links/SerialLink';
import {
  linkPreset,
  FrameFlag,
  ReadingFlag,
  type LinkReading,
} from '../../../shared/protocol/links';

/** A link whose RX carries the given chunks, then ends. */
function scriptedLink(chunks: (string | Uint8Array)[]): SerialLink {
  const enc = new TextEncoder();
  const readable = new ReadableStream<Uint8Array>({
    start(c) {
      for (const ch of chunks) c.enqueue(typeof ch === 'string' ? enc.encode(ch) : ch);
      c.close();
    },
  });
  return {
    kind: 'simulator',
    readable,
    writable: new WritableStream<Uint8Array>(),
    open: async () => {},
    close: async () => {},
    getInfo: () => ({}),
    ondisconnect: null,
  };
}

async function all(gen: AsyncGenerator<LinkReading>): Promise<LinkReading[]> {
  const out: LinkReading[] = [];
  for await (const r of gen) out.push(r);
  return out;
}

describe('link reader, talk-only', () => {
  it('numbers good readings and reports bad lines without stopping', async () => {
    const link = scriptedLink([
      '+1.6000',
      '01E+07\r\n+1.6\u00ff0E+07\r\n',
      '16.000002 MHz\r',
      '\n+1.6000',
    ]);
    const issues: string[] = [];
    const readings = await all(
      readLink(link, {
        profile: linkPreset('talk-counter'),
        onIssue: (i) => issues.push(`${i.kind}:${i.raw}`),
      }),
    );
    expect(readings.map((r) => r.seq)).toEqual([0, 1]);
    expect(readings[0].value).toBe(16000010);
    expect(readings[1].value).toBeCloseTo(16000002, 6);
    expect(issues).toEqual(['garbled:+1.6\uFFFD\uFFFD0E+07', 'garbled:+1.6000']); // ÿ is two UTF-8 bytes; the last line had no terminator
  });

  it('yields placeholders with flags when asked to keep invalid lines', async () => {
    const link = scriptedLink(['+1\r\nxx\r\n+9.9E+37\r\n+2\r\n']);
    const readings = await all(
      readLink(link, { profile: linkPreset('talk-counter'), keepInvalid: true, startSeq: 100 }),
    );
    expect(readings.map((r) => r.seq)).toEqual([100, 101, 102, 103]);
    expect(readings[1].flags).toBe(ReadingFlag.garbled);
    expect(Number.isNaN(readings[1].value)).toBe(true);
    expect(readings[2].flags).toBe(ReadingFlag.overrange);
    expect(readings[3]).toMatchObject({ value: 2, flags: 0 });
  });

  it('stamps readings with seconds since the reader started', async () => {
    let ms = 1000;
    const link = scriptedLink(['+1\n', '+2\n']);
    const readings: LinkReading[] = [];
    for await (const r of readLink(link, {
      profile: linkPreset('talk-counter'),
      now: () => (ms += 250),
    }))
      readings.push(r);
    expect(readings[0].t).toBeGreaterThan(0);
    expect(readings[1].t).toBeGreaterThan(readings[0].t);
  });
});

describe('parseLine', () => {
  const frame = (text: string, flags = 0) => ({ text, bytes: new Uint8Array(), flags });

  it('converts a number with unit into the profile unit', () => {
    const p = { ...linkPreset('talk-counter'), unit: 'kHz' };
    const r = parseLine(frame('16.000012 MHz'), p);
    expect(r.ok && r.value).toBeCloseTo(16000.012, 9);
    expect(parseLine(frame('16000.012'), p)).toMatchObject({ ok: true, value: 16000.012 }); // bare: already kHz
  });

  it('decodes the SPI bridge reply at the profile offset and scale (mg)', () => {
    const p = linkPreset('spi-bridge'); // offset 1, big-endian (DBX-3), 0.0625 mg/digit
    expect(parseLine(frame('01 3F 22'), p)).toMatchObject({ ok: true, value: 16162 * 0.0625 }); // simulators/README.md
    expect(parseLine(frame('01 FF C0'), p)).toMatchObject({ ok: true, value: -4 }); // −64 digits × 0.0625
    expect(parseLine(frame('ERR bad hex'), p)).toMatchObject({ ok: false, kind: 'device-error' });
    expect(parseLine(frame('FF'), p)).toMatchObject({ ok: false, kind: 'garbled' });
  });

  it('refuses damaged frames whatever they contain', () => {
    const p = linkPreset('talk-counter');
    expect(parseLine(frame('+1.6E+07', FrameFlag.partial), p)).toMatchObject({
      ok: false,
      flags: ReadingFlag.partial | ReadingFlag.garbled,
    });
    expect(parseLine(frame('+1.6E+07', FrameFlag.overlong), p)).toMatchObject({ ok: false });
  });
});
