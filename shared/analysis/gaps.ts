import { AnalysisError, assertNumber, assertSeries } from './errors';

/** A hole in a capture between two consecutive readings. */
export interface Gap {
  /** Index of the first reading after the gap. */
  index: number;
  /** Timestamp of the reading before the gap. */
  start: number;
  /** Timestamp of the reading after the gap. */
  end: number;
  /** Estimated number of readings lost: round((end − start)/gateTime) − 1. */
  missing: number;
}

export interface FindGapsOptions {
  /** A step longer than factor × gateTime is a gap (default 1.5; common practice, no source). */
  factor?: number;
}

/**
 * Gaps where consecutive timestamps differ by more than factor·gateTime (default 1.5, common
 * practice, no source). Domain: finite, non-decreasing timestamps in seconds (≥ 1), gateTime > 0.
 */
export function findGaps(
  t: ArrayLike<number>,
  gateTime: number,
  opts: FindGapsOptions = {},
): Gap[] {
  assertSeries(t, 't');
  assertNumber(gateTime, 'gateTime', true);
  const factor = opts.factor ?? 1.5;
  assertNumber(factor, 'factor', true);
  const limit = factor * gateTime;
  const gaps: Gap[] = [];
  for (let i = 1; i < t.length; i++) {
    const step = t[i] - t[i - 1];
    if (step < 0) throw new AnalysisError('bad-argument', `timestamps go backwards at index ${i}`);
    if (step > limit) {
      gaps.push({
        index: i,
        start: t[i - 1],
        end: t[i],
        missing: Math.max(1, Math.round(step / gateTime) - 1),
      });
    }
  }
  return gaps;
}
