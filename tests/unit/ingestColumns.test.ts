import { describe, expect, it } from 'vitest';
import { batchColumns, flagImplausible } from '../../server/services/ingestColumns.js';
import { ValidationError } from '../../server/errors.js';
import { PlausibilityWindow } from '../../shared/protocol/plausibility.js';
import { ReadingFlag } from '../../shared/protocol/reading.js';
import { encodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';

// The ingest's work before the database (server/services/ingestColumns.ts). Expected values are
// worked out by hand from the inputs (common practice, no source).
const readings = [
  { seq: 5, t: 0.5, value: 10, flags: 2 },
  { seq: 3, t: 0.3, value: 11 },
  { seq: 9, t: 0.9, value: 12 },
];

describe('batchColumns', () => {
  it('gives the same columns, seq range and order from a binary and a JSON body', () => {
    const want = {
      seqs: [5, 3, 9],
      ts: [0.5, 0.3, 0.9],
      values: [10, 11, 12],
      flags: [2, 0, 0],
      minSeq: 3,
      maxSeq: 9,
      increasing: false,
    };
    expect(batchColumns(Buffer.from(encodeReadingsF64(readings)))).toEqual(want);
    expect(batchColumns({ readings })).toEqual(want);
  });

  it('says an ascending batch is increasing and an empty one has no seq range', () => {
    expect(batchColumns({ readings: [readings[1], readings[0], readings[2]] })).toMatchObject({
      minSeq: 3,
      maxSeq: 9,
      increasing: true,
    });
    // A repeated seq is not increasing.
    expect(batchColumns({ readings: [readings[1], readings[1]] }).increasing).toBe(false);
    expect(batchColumns(Buffer.alloc(0))).toMatchObject({
      minSeq: -1,
      maxSeq: -1,
      increasing: true,
    });
  });

  it('refuses a bad body with the first bad reading named', () => {
    expect(() => batchColumns(Buffer.alloc(33))).toThrow(ValidationError);
    expect(() => batchColumns(Buffer.alloc(33))).toThrow(/32 bytes a reading/);
    const bad = encodeReadingsF64([readings[0], { seq: 4, t: 1, value: Number.NaN }]);
    expect(() => batchColumns(Buffer.from(bad))).toThrow(
      'reading 1: value must be a finite number',
    );
    expect(() => batchColumns({ readings: [readings[0], { seq: -1, t: 0, value: 1 }] })).toThrow(
      'readings[1]: seq must be a whole number from 0',
    );
    expect(() => batchColumns({})).toThrow('readings must be an array');
  });
});

describe('flagImplausible', () => {
  it('sets the implausible bit on refused values and leaves readings the link flagged unjudged', () => {
    // By hand: a window of 16 values 100.000…100.015 has median 100.0075 and MAD 0.004; 200 is
    // 99.99 away (> 10⁴·0.004 = 40 and > 0.1 % of 100), 100.05 only 0.0425 away; 1e308 is
    // beyond the 1e15 bound.
    const seed = Array.from({ length: 16 }, (_, i) => 100 + i / 1000);
    const flags = [0, 0, 0, 4];
    flagImplausible(new PlausibilityWindow(null, seed), [200, 100.05, 1e308, 1e308], flags);
    expect(flags).toEqual([ReadingFlag.implausible, 0, ReadingFlag.implausible, 4]);
  });
});
