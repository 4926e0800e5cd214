import { describe, expect, it } from 'vitest';
import {
  createBoundedBuffer,
  createRawSplitter,
  decodeValueField,
  formatReadingValue,
  parseHexInput,
  presetForDevice,
  readingDecimals,
  renderBytes,
  simulatorTarget,
} from '../../../src/links/linkConsoleText';

const bytes = (s: string) => new TextEncoder().encode(s);
const text = (lines: Uint8Array[]) => lines.map((l) => new TextDecoder().decode(l));

describe('the raw view of link bytes', () => {
  it('shows hex and printable text with CR and LF as visible symbols', () => {
    expect(renderBytes(bytes('+1.6E+07\r\n'))).toEqual({
      hex: '2B 31 2E 36 45 2B 30 37 0D 0A',
      text: '+1.6E+07\u240D\u240A',
    });
  });

  it('marks bytes outside printable ASCII with a dot and tabs with their symbol', () => {
    expect(renderBytes(Uint8Array.of(0x41, 0xff, 0x09, 0x00))).toEqual({
      hex: '41 FF 09 00',
      text: 'A\u00B7\u2409\u2400',
    });
  });

  it('splits the stream after LF, after a lone CR, and keeps CR LF together across chunks', () => {
    const s = createRawSplitter();
    expect(text(s.push(bytes('+1.0\r')))).toEqual([]);
    expect(text(s.push(bytes('\n+2.0\rok\n')))).toEqual(['+1.0\r\n', '+2.0\r', 'ok\n']);
  });

  it('cuts an endless line at its byte limit and hands back what waits on flush', () => {
    const s = createRawSplitter(4);
    expect(text(s.push(bytes('ABCDEFG')))).toEqual(['ABCD']);
    expect(new TextDecoder().decode(s.flush()!)).toBe('EFG');
    expect(s.flush()).toBeNull();
  });

  it('loses no byte whatever the chunking', () => {
    const stream = 'FF 5D 12\n+1.6E+07\r\n\r\nERR bad hex\rX';
    for (let cut = 0; cut <= stream.length; cut++) {
      const s = createRawSplitter(16);
      const lines = [...s.push(bytes(stream.slice(0, cut))), ...s.push(bytes(stream.slice(cut)))];
      const rest = s.flush();
      expect(text(rest ? [...lines, rest] : lines).join('')).toBe(stream);
    }
  });
});

describe('the bounded console buffers', () => {
  it('keeps only the last items, in order', () => {
    const b = createBoundedBuffer<number>(500);
    for (let i = 0; i < 2000; i++) b.push(i);
    const kept = b.toArray();
    expect(kept).toHaveLength(500);
    expect(kept[0]).toBe(1500);
    expect(kept[499]).toBe(1999);
    expect(b.size).toBe(500);
  });

  it('clears', () => {
    const b = createBoundedBuffer<string>(3);
    b.push('a', 'b');
    b.clear();
    expect(b.toArray()).toEqual([]);
  });
});

describe("SPI transfers read by the link profile's value field", () => {
  // Exchanges from simulators/README.md (the accel preset lying flat, noise off).
  const field = { offset: 1, bigEndian: true, scale: 0.0625 };

  it('reads Z from a poll reply, big-endian at byte 1, in mg', () => {
    const v = decodeValueField(Uint8Array.of(0x01, 0x3f, 0x22), field);
    expect(v?.digits).toBe(16162); // 0x3F22, simulators/README.md
    expect(v?.value).toBeCloseTo(1010.125, 9); // 16162 × 0.0625 mg
  });

  it('follows the byte order and sign the field names', () => {
    expect(
      decodeValueField(Uint8Array.of(0x01, 0xd5, 0xff), { ...field, bigEndian: false })?.digits,
    ).toBe(-43); // 0xFFD5
    expect(decodeValueField(Uint8Array.of(0x01, 0xff, 0xd5), field)?.digits).toBe(-43);
  });

  it("reads nothing without a field or past the reply's end", () => {
    expect(decodeValueField(Uint8Array.of(0x01, 0x3f, 0x22), undefined)).toBeNull();
    expect(decodeValueField(Uint8Array.of(0x01, 0x3f), field)).toBeNull();
  });
});

describe('typed hex and reading values', () => {
  it.each([
    ['A0 00', [0xa0, 0x00]],
    ['a0,00', [0xa0, 0x00]],
    ['0xC0 0x00 0x00', [0xc0, 0, 0]],
  ])('reads "%s" as bytes', (input, expected) => {
    const r = parseHexInput(input);
    expect(r.ok && Array.from(r.bytes)).toEqual(expected);
  });

  it('explains input that is not hex', () => {
    expect(parseHexInput('')).toEqual({
      ok: false,
      message: 'enter at least one byte, e.g. 03 00 00',
    });
    expect(parseHexInput('A0 G1')).toMatchObject({
      ok: false,
      message: expect.stringContaining('byte 2'),
    });
  });

  it.each([
    [16000051.23456, '16\u2009000\u2009051.23456'],
    [32768.21305, '32\u2009768.21305000'],
    [-12.5, '\u221212.500000000'],
    [NaN, '—'],
  ])('formats %d with 13 significant digits and grouped thousands', (value, expected) => {
    expect(formatReadingValue(value)).toBe(expected);
  });
});

describe('the simulator a link-page setting opens', () => {
  const base = {
    source: 'simulator' as const,
    counterPreset: 'osc-25m',
    checkpoint: 2,
    accel: 10,
    gate: 1,
    garble: 0.01,
    orientation: 'edge',
  };

  it('asks the counter to talk or to answer queries, with the scenario parameters', () => {
    expect(simulatorTarget({ ...base, device: 'counter-talk' })).toEqual({
      path: '/sim/counter',
      params: {
        mode: 'talk',
        preset: 'osc-25m',
        checkpoint: '2',
        accel: '10',
        gate: '1',
        garble: '0.01',
      },
    });
    expect(simulatorTarget({ ...base, device: 'counter-query' }).params.mode).toBe('query');
    expect(presetForDevice('counter-query')).toBe('scpi-counter');
  });

  it('opens the SPI bridge with the accelerometer lying as chosen', () => {
    expect(simulatorTarget({ ...base, device: 'spi-bridge' })).toEqual({
      path: '/sim/spi-bridge',
      params: { preset: 'accel', checkpoint: '2', orientation: 'edge', accel: '10' },
    });
    expect(presetForDevice('spi-bridge')).toBe('spi-bridge');
  });
});

describe('the resolution a reading is shown at', () => {
  it("shows an SPI value at its scale's resolution and a counter value at 13 digits", () => {
    expect(
      readingDecimals({
        parseRule: 'hex-spi',
        hexSpi: { offset: 1, bigEndian: false, scale: 0.0625 },
      }),
    ).toBe(4);
    expect(readingDecimals({ parseRule: 'number-with-unit' })).toBeUndefined();
    expect(formatReadingValue(1010.6875, 4)).toBe('1\u2009010.6875');
  });
});
