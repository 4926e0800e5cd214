import { compensatedSum } from './compensatedSum';
import { assertNumber, assertSeries } from './errors';
import { medianInPlace } from './median';
import { borrowWorkspace } from './workspace';

/** Gate-time statistics of one capture; sd is the sample (n − 1) standard deviation. */
export interface Summary {
  n: number;
  mean: number;
  sd: number;
  sem: number;
  min: number;
  max: number;
  median: number;
  /** Raw median absolute deviation, median(|x − median|), unscaled. */
  mad: number;
  /** Indices whose robust z exceeds the threshold; flagged, never removed. */
  outliers: number[];
}

export interface SummarizeOptions {
  /** Robust z threshold (default 5). */
  outlierZ?: number;
}

/** 0.6745 ≈ Φ⁻¹(0.75): Iglewicz & Hoaglin (1993) modified z-score, M = 0.6745·(x − x̃)/MAD. */
const MAD_TO_Z = 0.6745;
/** √(π/2): mean absolute deviation → σ for normal data; fallback when MAD = 0 (from memory). */
const MEANAD_TO_SIGMA = 1.253314;

/**
 * Mean (Neumaier-compensated), two-pass sample sd (n − 1), SEM = sd/√n, min, max, median, MAD and
 * outliers by the modified z-score 0.6745·|x − median|/MAD > outlierZ (Iglewicz & Hoaglin, ASQC
 * "How to Detect and Handle Outliers", 1993). When MAD = 0 (over half the readings identical), the
 * mean absolute deviation × 1.253314 stands in for σ (common practice, from memory); when that is
 * also zero no reading is flagged. Domain: at least two finite readings.
 */
export function summarize(values: ArrayLike<number>, opts: SummarizeOptions = {}): Summary {
  assertSeries(values, 'values', 2);
  const outlierZ = opts.outlierZ ?? 5;
  assertNumber(outlierZ, 'outlierZ', true);
  const n = values.length;
  const mean = compensatedSum(values) / n;

  // second pass: deviations from an accurate mean are exact for close readings (Sterbenz)
  let ss = 0;
  let c = 0;
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v < min) min = v;
    if (v > max) max = v;
    const d = v - mean;
    const sq = d * d;
    const t = ss + sq;
    c += ss >= sq ? ss - t + sq : sq - t + ss;
    ss = t;
  }
  const sd = Math.sqrt((ss + c) / (n - 1));

  const scratch = borrowWorkspace(0, n);
  for (let i = 0; i < n; i++) scratch[i] = values[i];
  const med = medianInPlace(scratch);
  for (let i = 0; i < n; i++) scratch[i] = Math.abs(values[i] - med);
  const mad = medianInPlace(scratch);

  let scale = mad / MAD_TO_Z;
  if (mad === 0) {
    let sumAbs = 0;
    for (let i = 0; i < n; i++) sumAbs += Math.abs(values[i] - med);
    scale = (sumAbs / n) * MEANAD_TO_SIGMA;
  }
  const outliers: number[] = [];
  if (scale > 0) {
    for (let i = 0; i < n; i++) {
      if (Math.abs(values[i] - med) / scale > outlierZ) outliers.push(i);
    }
  }
  return { n, mean, sd, sem: sd / Math.sqrt(n), min, max, median: med, mad, outliers };
}
