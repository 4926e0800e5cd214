import { AnalysisError, assertSameLength, assertSeries } from './errors';

/** A decimated trace for plotting. */
export interface Decimated {
  t: Float64Array;
  v: Float64Array;
}

/**
 * Min–max decimation for charts (common plotting practice, no source): splits the series into
 * `buckets` equal index ranges and keeps each range's minimum and maximum in time order, so every
 * extreme survives; at most 2·buckets points. Passes a copy through when n ≤ 2·buckets. Domain:
 * finite t and v of equal length, integer buckets ≥ 1.
 */
export function decimateMinMax(
  t: ArrayLike<number>,
  v: ArrayLike<number>,
  buckets: number,
): Decimated {
  if (!Number.isInteger(buckets) || buckets < 1) {
    throw new AnalysisError('bad-argument', 'buckets must be an integer ≥ 1');
  }
  assertSameLength(t, v, 't and v');
  assertSeries(t, 't');
  assertSeries(v, 'v');
  const n = v.length;
  if (n <= 2 * buckets) return { t: Float64Array.from(t), v: Float64Array.from(v) };
  const ot = new Float64Array(2 * buckets);
  const ov = new Float64Array(2 * buckets);
  let o = 0;
  for (let b = 0; b < buckets; b++) {
    const start = Math.floor((b * n) / buckets);
    const end = Math.floor(((b + 1) * n) / buckets); // exclusive; ≥ start + 2 since n > 2·buckets
    let iMin = start;
    let iMax = start;
    let vMin = v[start];
    let vMax = vMin;
    for (let i = start + 1; i < end; i++) {
      const x = v[i];
      if (x < vMin) {
        vMin = x;
        iMin = i;
      } else if (x > vMax) {
        vMax = x;
        iMax = i;
      }
    }
    if (iMin === iMax) iMax = end - 1; // flat bucket: keep its two ends
    const first = iMin < iMax ? iMin : iMax;
    const second = iMin < iMax ? iMax : iMin;
    ot[o] = t[first];
    ov[o++] = v[first];
    ot[o] = t[second];
    ov[o++] = v[second];
  }
  return { t: ot, v: ov };
}
