import { describe, expect, it } from 'vitest';
import { decodeHexLine, encodeHexLine, readInt16 } from '../../../shared/protocol/hex';

describe('SPI hex codec', () => {
  it('encodes bytes as an upper-case hex line', () => {
    expect(encodeHexLine([0x0b, 0, 0])).toBe('0B 00 00\n');
    expect(encodeHexLine(Uint8Array.of(0xe0, 0xff))).toBe('E0 FF\n');
  });

  it('refuses empty transfers and non-bytes', () => {
    expect(() => encodeHexLine([])).toThrow();
    expect(() => encodeHexLine([256])).toThrow();
    expect(() => encodeHexLine(new Array(65).fill(0))).toThrow();
  });

  it('decodes reply lines, tolerating case, commas and extra spaces', () => {
    const r = decodeHexLine(' ff 12,34  ');
    expect(r.ok && Array.from(r.bytes)).toEqual([0xff, 0x12, 0x34]);
  });

  it.each([
    ['', 'empty'],
    ['FF 1', 'bad-hex'],
    ['FF G1', 'bad-hex'],
    ['FF12', 'bad-hex'],
    ['ERR bad hex', 'device-error'],
    [new Array(65).fill('00').join(' '), 'too-long'],
  ])('refuses "%s" as %s', (line, reason) => {
    expect(decodeHexLine(line)).toMatchObject({ ok: false, reason });
  });

  it('reads 16-bit two’s complement in either byte order', () => {
    const b = Uint8Array.of(0xff, 0x80, 0x3e, 0xc0, 0xff);
    expect(readInt16(b, 1)).toBe(0x3e80); // 16000
    expect(readInt16(b, 3)).toBe(-64); // 0xFFC0
    expect(readInt16(b, 1, true)).toBe(-32706); // 0x803E
    expect(() => readInt16(b, 4)).toThrow();
  });
});
