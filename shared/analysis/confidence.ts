import jStat from 'jstat';
import { AnalysisError, assertNumber } from './errors';

/** Probability content of ±1σ of a normal distribution, erf(1/√2): SP 1065 §5.3's default. */
export const ONE_SIGMA = 0.6826894921370859;

/**
 * Inverse χ² distribution function. jstat's chisquare.inv up to 1000 degrees of freedom; above,
 * the Wilson–Hilferty cube approximation (Wilson & Hilferty, PNAS 17, 1931), which agrees with
 * jstat to < 2e-6 relative at 1000 dof and better beyond, and is ~10⁴× faster there.
 */
export function chiSquareInv(p: number, dof: number): number {
  if (dof <= 1000) return jStat.chisquare.inv(p, dof);
  const z = jStat.normal.inv(p, 0, 1);
  const h = 2 / (9 * dof);
  return dof * (1 - h + z * Math.sqrt(h)) ** 3;
}

/** Deviation bounds from a χ² interval on the variance. */
export interface DeviationInterval {
  lo: number;
  hi: number;
}

/**
 * χ² confidence interval of a deviation (NIST SP 1065 §5.3, eq 45):
 * σ²_min = σ²·edf/χ²(1−(1−p)/2), σ²_max = σ²·edf/χ²((1−p)/2); returns the square roots.
 * Domain: σ ≥ 0, edf > 0, 0 < p < 1.
 */
export function chiSquareInterval(
  dev: number,
  edf: number,
  confidence = ONE_SIGMA,
): DeviationInterval {
  assertNumber(dev, 'dev');
  if (dev < 0) throw new AnalysisError('bad-argument', 'dev must not be negative');
  assertNumber(edf, 'edf', true);
  assertNumber(confidence, 'confidence', true);
  if (confidence >= 1) throw new AnalysisError('bad-argument', 'confidence must be below 1');
  const tail = (1 - confidence) / 2;
  const lo = dev * Math.sqrt(edf / chiSquareInv(1 - tail, edf));
  const hi = dev * Math.sqrt(edf / chiSquareInv(tail, edf));
  return { lo, hi };
}
