import { AnalysisError, assertNumber } from './errors';
import type { NoiseType } from './noise';

/**
 * Barnes & Allan's B2 bias function (NIST TN 1318, "Variances based on data with dead time between
 * the measurements", 1990): the ratio of the two-sample variance of averages of length τ taken every
 * T = r·τ to the same variance without dead time (r = 1), for σ²_y(τ) ∝ τ^μ. Derived here from the
 * definition with the phase structure function ∝ |t|^(μ+2) (t²·ln|t| at μ = 0):
 *   B2(r, μ) = [(r + 1)^(μ+2) + |r − 1|^(μ+2) − 2r^(μ+2) − 2] / [4(2^μ − 1)],
 *   B2(r, 0) = [(r + 1)² ln(r + 1) + (r − 1)² ln|r − 1| − 2r² ln r] / (4 ln 2),
 *   B2(r, −2) = 2/3 for r > 1 (four distinct phase samples instead of three), 1 at r = 1.
 * Checks (TN 1318, from memory, and from the formula): B2 = 1 for white FM at any r; B2(r, 1) =
 * (3r − 1)/2. Domain: r ≥ 1, μ ∈ {−2, −1, 0, 1}.
 */
export function barnesAllanB2(r: number, mu: number): number {
  assertNumber(r, 'r');
  if (r < 1) throw new AnalysisError('bad-argument', 'the dead-time ratio T/τ must be ≥ 1');
  if (r === 1) return 1;
  switch (mu) {
    case -2:
      return 2 / 3;
    case 0: {
      const f = (v: number) => (v === 0 ? 0 : v * v * Math.log(Math.abs(v)));
      return (f(r + 1) + f(r - 1) - 2 * f(r)) / (4 * Math.LN2);
    }
    case -1:
    case 1: {
      const p = mu + 2;
      return ((r + 1) ** p + Math.abs(r - 1) ** p - 2 * r ** p - 2) / (4 * (2 ** mu - 1));
    }
    default:
      throw new AnalysisError('bad-argument', `no B2 for μ = ${mu}`);
  }
}

/** μ of σ²_y(τ) ∝ τ^μ for the noises whose dead-time bias B2 corrects (SP 1065 Table 3); FPM: none. */
export const DEAD_TIME_MU: Readonly<Partial<Record<NoiseType, number>>> = {
  wpm: -2,
  wfm: -1,
  ffm: 0,
  rwfm: 1,
};

/**
 * Dead-time ratio at averaging factor m for readings of gate `gate` every τ0 (τ0 − gate is dead):
 * m readings are taken as one average spanning m·τ0 − dead, repeated every m·τ0 — Driftbench's use
 * of B2 beyond m = 1 (TN 1318's B3 would treat the interior dead times exactly; B2 with the outer
 * span is its first-order stand-in and tends to 1 as m grows, as B3 does).
 */
export function deadTimeRatio(tau0: number, gate: number, m: number): number {
  const dead = tau0 - gate;
  if (!(dead > 0)) return 1;
  return (m * tau0) / (m * tau0 - dead);
}

/**
 * TOTVAR's bias for flicker and random-walk FM, E[TOTVAR]/AVAR = 1 − a·τ/T with T the record length
 * (NIST SP 1065 §5.2.11; a = 1/(3 ln 2) ≈ 0.481 for flicker FM, 0.750 for random-walk FM, 0 for
 * white FM — from memory of SP 1065, consistent with a Monte Carlo ratio of 0.80–0.86 at τ = T/4).
 * Returns null for phase noises, where SP 1065 gives no correction.
 */
export function totdevBias(noise: NoiseType, tau: number, recordLength: number): number | null {
  const a =
    noise === 'wfm' ? 0 : noise === 'ffm' ? 1 / (3 * Math.LN2) : noise === 'rwfm' ? 0.75 : null;
  if (a === null) return null;
  return 1 - (a * tau) / recordLength;
}
