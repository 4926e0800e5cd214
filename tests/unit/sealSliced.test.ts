import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { sealOf, sealOfSliced } from '../../server/services/seal.js';

/**
 * The serialisation of docs/record.md written here independently with a DataView (22 bytes a
 * reading, big-endian seq u32, t f64, value f64, flags i16), hashed with node:crypto.
 */
function expectedDigest(seq: number[], t: number[], value: number[], flags: number[]): string {
  const view = new DataView(new ArrayBuffer(seq.length * 22));
  seq.forEach((_, i) => {
    const o = i * 22;
    view.setUint32(o, seq[i]);
    view.setFloat64(o + 4, t[i]);
    view.setFloat64(o + 12, value[i]);
    view.setInt16(o + 20, flags[i]);
  });
  return createHash('sha256').update(new Uint8Array(view.buffer)).digest('hex');
}

function series(n: number) {
  const seq = Array.from({ length: n }, (_, i) => i * 3 + 1);
  const t = seq.map((s) => s * 0.1);
  const value = seq.map((s) => 10e6 + Math.sin(s) * 1e-3);
  const flags = seq.map((s) => (s % 7 === 0 ? -2 : s % 5 === 0 ? 1 : 0));
  return {
    plain: { seq, t, value, flags },
    typed: {
      seq: Int32Array.from(seq),
      t: Float64Array.from(t),
      value: Float64Array.from(value),
      flags: Int16Array.from(flags),
    },
  };
}

describe('sealOfSliced', () => {
  it('hashes slice by slice to the digest of the whole serialisation', async () => {
    const { plain, typed } = series(1000);
    const want = expectedDigest(plain.seq, plain.t, plain.value, plain.flags);
    // Slices that divide the series, that do not, of one reading, and larger than the series.
    for (const slice of [100, 333, 1, 5000]) expect(await sealOfSliced(typed, slice)).toBe(want);
    expect(await sealOfSliced(typed)).toBe(want);
    expect(sealOf(typed)).toBe(want);
  });

  it('gives the SHA-256 of the empty string for no readings', async () => {
    const { typed } = series(0);
    // SHA-256 of the empty message, FIPS 180-4 example (well-known value).
    expect(await sealOfSliced(typed)).toBe(
      'e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855',
    );
  });

  it('lets other work run between slices', async () => {
    const { typed } = series(10);
    let ran = false;
    setImmediate(() => (ran = true));
    await sealOfSliced(typed, 2);
    expect(ran).toBe(true);
  });
});
