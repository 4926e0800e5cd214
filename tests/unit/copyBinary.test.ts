import { describe, expect, it } from 'vitest';
import {
  COPY_BINARY_HEADER,
  COPY_BINARY_TRAILER,
  readingsCopyBinary,
  readingsCopyRows,
} from '../../server/db/copyBinary.js';

// The layout of PostgreSQL's binary COPY format (PostgreSQL documentation, COPY, "Binary
// Format"): an 11-byte signature, int32 flags, int32 header-extension length; per row an int16
// field count and, per field, an int32 length and the value's big-endian send form; int16 −1 ends.
// Each expected byte below is written out by hand from that description, not by the encoder.
describe('readings in binary COPY form', () => {
  it('writes the header and trailer the format prescribes', () => {
    expect(COPY_BINARY_HEADER.toString('hex')).toBe(
      '5047434f50590aff0d0a00' + '00000000' + '00000000',
    );
    expect([...COPY_BINARY_TRAILER]).toEqual([0xff, 0xff]);
  });

  it('writes one row field by field, big-endian', () => {
    // 1.5 = 0x3FF8000000000000 and −2 = 0xC000000000000000 in IEEE 754 binary64.
    const row = readingsCopyRows(258, [65_537], [1.5], [-2], [33]);
    expect(row.toString('hex')).toBe(
      [
        '0005', // five fields
        '00000004' + '00000102', // capture_id 258
        '00000004' + '00010001', // seq 65,537
        '00000008' + '3ff8000000000000', // t 1.5
        '00000008' + 'c000000000000000', // value −2
        '00000002' + '0021', // flags 33
      ].join(''),
    );
  });

  it('keeps every double bit for bit and the rows in order', () => {
    const t = [0, -0, 1e-300, 123456.789];
    const v = [10e6 + 1e-3, Number.MAX_VALUE, -Number.MIN_VALUE, 0.1];
    const body = readingsCopyBinary(7, [0, 1, 2, 2_147_483_647], t, v, [0, 1, 32, 63]);
    expect(body.length).toBe(19 + 4 * 48 + 2);
    for (let i = 0; i < 4; i++) {
      const o = 19 + i * 48;
      expect(body.readInt32BE(o + 6)).toBe(7);
      expect(Object.is(body.readDoubleBE(o + 22), t[i])).toBe(true);
      expect(Object.is(body.readDoubleBE(o + 34), v[i])).toBe(true);
    }
    expect(body.readInt32BE(19 + 3 * 48 + 14)).toBe(2_147_483_647);
    expect(body.readInt16BE(19 + 2 * 48 + 46)).toBe(32);
  });
});
