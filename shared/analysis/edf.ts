import { NOISE_ALPHA, type NoiseType } from './noise';
import type { StabilityKind } from './taus';

/**
 * Simple EDF of the overlapping Allan variance, NIST SP 1065 Table 5 (after Howe, Allan &
 * Barnes), for N phase points and averaging factor m. Kept as a published cross-check of
 * greenhallEdf (docs/stability.md); the intervals use greenhallEdf.
 */
export function oadevEdf(nPhase: number, m: number, noise: NoiseType): number {
  const N = nPhase;
  switch (noise) {
    case 'wpm':
      return ((N + 1) * (N - 2 * m)) / (2 * (N - m));
    case 'fpm':
      return Math.exp(
        Math.sqrt(Math.log((N - 1) / (2 * m)) * Math.log(((2 * m + 1) * (N - 1)) / 4)),
      );
    case 'wfm':
      return ((3 * (N - 1)) / (2 * m) - (2 * (N - 2)) / N) * ((4 * m * m) / (4 * m * m + 5));
    case 'ffm':
      return m === 1 ? (2 * (N - 2) ** 2) / (2.3 * N - 4.9) : (5 * N * N) / (4 * m * (N + 3 * m));
    case 'rwfm':
      return ((N - 2) / m) * (((N - 1) ** 2 - 3 * m * (N - 1) + 4 * m * m) / (N - 3) ** 2);
  }
}

/** (b, c) of the TOTDEV EDF b·(T/τ) − c, NIST SP 1065 Table 7 (frequency noises only). */
const TOTDEV_BC: Readonly<Partial<Record<NoiseType, readonly [number, number]>>> = {
  wfm: [1.5, 0],
  ffm: [1.17, 0.22],
  rwfm: [0.93, 0.36],
};

/** Driftbench's b of a TOTDEV EDF bound b·(T/τ) for phase noises (see stabilityEdf). */
const TOTDEV_PM_B = 5;

/**
 * TOTDEV EDF b·(T/τ) − c (NIST SP 1065 Table 7), T/τ = (N_phase − 1)/m. Table 7 has no phase-noise
 * entry: white PM and flicker PM return NaN (the caller falls back to the OADEV value).
 */
export function totdevEdf(nPhase: number, m: number, noise: NoiseType): number {
  const bc = TOTDEV_BC[noise];
  if (!bc) return NaN;
  const [b, c] = bc;
  return (b * (nPhase - 1)) / m - c;
}

/** The finite-difference estimator behind one stability kind (Greenhall & Riley's d, F, S). */
export interface DifferenceEstimator {
  /** Order of the phase difference: 2 for the Allan family, 3 for the Hadamard family. */
  d: 2 | 3;
  /** Modified (phase averaged over τ before differencing: MVAR, TVAR) or not. */
  modified: boolean;
  /** Overlapping (a term at every phase sample) or not (a term every m samples). */
  overlapping: boolean;
}

/** d, modification and overlap of every kind (NIST SP 1065 §5.2; TOTDEV is handled apart). */
export const DIFFERENCE_ESTIMATOR: Readonly<
  Record<Exclude<StabilityKind, 'totdev'>, DifferenceEstimator>
> = {
  adev: { d: 2, modified: false, overlapping: false },
  oadev: { d: 2, modified: false, overlapping: true },
  mdev: { d: 2, modified: true, overlapping: true },
  tdev: { d: 2, modified: true, overlapping: true },
  hdev: { d: 3, modified: false, overlapping: false },
  ohdev: { d: 3, modified: false, overlapping: true },
};

// ---------------------------------------------------------------------------------------------
// Greenhall & Riley's EDF of a finite-difference stability variance
// ---------------------------------------------------------------------------------------------
//
// C. A. Greenhall and W. J. Riley, "Uncertainty of stability variances based on finite
// differences", Proc. 35th PTTI (2003), the method NIST SP 1065 §5.3 points to. Time t is in units
// of τ = m·τ0. A variance estimate is the mean of M squared terms z_i taken every τ/S (S = m
// overlapping, 1 not); for Gaussian noise its EDF is 2(E V)²/Var V, i.e.
//
//   1/edf = [ sz(0)² + 2 Σ_{j=1}^{J−1} (1 − j/M)·sz(j/S)² + (1 − J/M)·sz(J/S)² ] / (M·sz(0)²),
//
// sz the covariance of the terms, J = min(M, (d+1)·S) (beyond (d+1)τ the terms share no phase
// sample; for white noise in x or y the sum is then exact, for the other noises the paper
// truncates there too). sz(t) = Σ_k (−1)^k·C(2d, d+k)·sx(t + k) is the d-th difference of the
// phase covariance sx, built from the generalised autocovariance sw of w = ∫x, one closed form per
// power-law α. Driftbench's implementation details (docs/stability.md):
//  - phase noises (α = 2, 1) unmodified: sx averages w over τ0 = τ/m (the paper's F = m), which is
//    exactly the covariance of discrete white phase samples;
//  - frequency noises (α ≤ 0) unmodified: sx = sw(t, α + 2), the covariance of instantaneous phase
//    samples (the paper's F = ∞) — exact for white FM, where the phase is the running sum of
//    independent readings;
//  - modified kinds average m phase samples: for α = 2, 1 that equals the paper's F = 1 exactly; for
//    α ≤ 0 the m-sample average is summed directly up to m = 64 and taken as the continuous average
//    (F = 1) beyond, where the two differ by O(1/m²);
//  - J above J_MAX: the sum is a Riemann sum of a continuous function of t, so it is evaluated on a
//    grid of J_MAX lags with M and S scaled alike (the paper's own device for its case J > J_max),
//    normalised by the exact sz(0); white PM unmodified needs no grid (sz vanishes off integer t).

const J_MAX = 400;
const MODIFIED_DIRECT_MAX_M = 64;

/** Generalised autocovariance of w = ∫x for S_y ∝ f^α (Greenhall & Riley, their sw). */
function sw(t: number, alpha: number): number {
  const a = Math.abs(t);
  switch (alpha) {
    case 2:
      return -a;
    case 1:
      return a === 0 ? 0 : t * t * Math.log(a);
    case 0:
      return a * a * a;
    case -1:
      return a === 0 ? 0 : t ** 4 * Math.log(a);
    case -2:
      return a ** 5;
    case -3:
      return a === 0 ? 0 : t ** 6 * Math.log(a);
    case -4:
      return a ** 7;
    default:
      throw new RangeError(`no power-law model for α = ${alpha}`);
  }
}

/** Phase covariance model at lag t (units of τ) for one estimator setting. */
type PhaseCovariance = (t: number) => number;

function averagedOver(alpha: number, window: number): PhaseCovariance {
  const F = 1 / window;
  return (t) => F * F * (2 * sw(t, alpha) - sw(t - window, alpha) - sw(t + window, alpha));
}

function phaseCovariance(
  alpha: number,
  m: number,
  modified: boolean,
  gridF?: number,
): PhaseCovariance {
  if (!modified) {
    if (alpha >= 1) return averagedOver(alpha, 1 / (gridF ?? m));
    return (t) => sw(t, alpha + 2);
  }
  if (alpha >= 1 || m > MODIFIED_DIRECT_MAX_M) return averagedOver(alpha, 1);
  // The mean of m instantaneous phase samples τ0 = τ/m apart: Σ_l (m − |l|)·γ(t + l/m) / m².
  return (t) => {
    let s = m * sw(t, alpha + 2);
    for (let l = 1; l < m; l++)
      s += (m - l) * (sw(t + l / m, alpha + 2) + sw(t - l / m, alpha + 2));
    return s / (m * m);
  };
}

const BINOMIAL_ROWS: Readonly<Record<number, readonly number[]>> = {
  // (−1)^k·C(2d, d + k) for k = 0 … d
  1: [2, -1],
  2: [6, -4, 1],
  3: [20, -15, 6, -1],
};

function termCovariance(sx: PhaseCovariance, d: number): (t: number) => number {
  const w = BINOMIAL_ROWS[d];
  return (t) => {
    let s = w[0] * sx(t);
    for (let k = 1; k <= d; k++) s += w[k] * (sx(t - k) + sx(t + k));
    return s;
  };
}

/** Everything greenhallEdf needs about one estimate. */
export interface GreenhallInput extends DifferenceEstimator {
  /** Power-law exponent of the frequency noise, S_y ∝ f^α (2 … −2; −3, −4 with d = 3). */
  alpha: number;
  /** Averaging factor. */
  m: number;
  /** Number of phase points. */
  nPhase: number;
}

/**
 * EDF of a finite-difference stability variance by the general algorithm of Greenhall & Riley
 * (Proc. 35th PTTI, 2003; NIST SP 1065 §5.3), for every power-law noise and the ADEV, OADEV, MDEV,
 * TDEV, HDEV and OHDEV estimators. Returns NaN when the estimate has no term. Domain: α an integer
 * with α > 1 − 2d, m ≥ 1.
 */
export function greenhallEdf(input: GreenhallInput): number {
  const { alpha, m, nPhase: N, d, modified, overlapping } = input;
  if (!Number.isInteger(alpha) || alpha > 2 || alpha <= 1 - 2 * d) {
    throw new RangeError(`α = ${alpha} is outside the model range for d = ${d}`);
  }
  const S = overlapping ? m : 1;
  const span = (modified ? m : 1) + m * d; // phase samples one term spans
  const M = 1 + Math.floor((S * (N - span)) / m);
  if (!(M >= 1)) return NaN;
  const J = Math.min(M, (d + 1) * S);
  const sz = termCovariance(phaseCovariance(alpha, m, modified), d);
  const sz0 = sz(0);

  // White PM, unmodified: sz(j/S) is zero unless j/S is an integer, so only d + 1 lags count.
  if (alpha === 2 && !modified) {
    const step = S; // j = k·S ↔ t = k
    let sum = sz0 * sz0;
    for (let j = step; j < J; j += step) sum += 2 * (1 - j / M) * sz(j / S) ** 2;
    if (J % step === 0) sum += (1 - J / M) * sz(J / S) ** 2;
    return (M * sz0 * sz0) / sum;
  }
  if (J <= J_MAX) return (M * sz0 * sz0) / basicSum(sz, J, M, S);

  // Riemann grid of J_MAX lags: M and S scaled by the same factor keep r = M/S and the t-range.
  const q = J_MAX / J;
  const Mq = M * q;
  const Sq = S * q;
  const szGrid =
    alpha >= 1 && !modified ? termCovariance(phaseCovariance(alpha, m, false, Sq), d) : sz;
  return (Mq * sz0 * sz0) / basicSum(szGrid, J_MAX, Mq, Sq);
}

function basicSum(sz: (t: number) => number, J: number, M: number, S: number): number {
  let sum = sz(0) ** 2 + (1 - J / M) * sz(J / S) ** 2;
  for (let j = 1; j < J; j++) sum += 2 * (1 - j / M) * sz(j / S) ** 2;
  return sum;
}

/**
 * EDF used for each estimator's χ² interval: greenhallEdf for the finite-difference kinds. TOTDEV
 * is not a finite-difference estimator of the paper; Driftbench's rule (checked against the exact
 * EDF of white PM and white FM in tests/unit/analysis/edf.test.ts):
 *  - m = 1: the OADEV value (TOTVAR(τ0) is OVAR(τ0) term for term);
 *  - frequency noises: the OADEV structure with TOTVAR's N − 2 terms (the reflection removes the
 *    edge loss), capped by SP 1065 Table 7's b·(T/τ) − c where that is smaller;
 *  - phase noises (no Table 7 entry): the reflected terms all share the end samples and add little;
 *    min(that OADEV structure, 5·T/τ, max(EDF_OADEV, 2.5·T/τ)), bounds of Table 7's form that
 *    Driftbench fitted to exact white-PM values (N = 129 and 257: from −55 % to +5 % of exact,
 *    erring low — a wider interval — where it errs).
 * Clamped to [1, terms]: a sum of `terms` squared Gaussians has at most `terms` degrees of freedom.
 */
export function stabilityEdf(
  kind: StabilityKind,
  nPhase: number,
  m: number,
  terms: number,
  noise: NoiseType,
): number {
  const alpha = NOISE_ALPHA[noise];
  let edf: number;
  if (kind === 'totdev') {
    const oadev = { ...DIFFERENCE_ESTIMATOR.oadev, alpha, m };
    if (m === 1) edf = greenhallEdf({ ...oadev, nPhase });
    else {
      const noEdgeLoss = greenhallEdf({ ...oadev, nPhase: nPhase - 2 + 2 * m });
      if (alpha >= 1) {
        const tOverTau = (nPhase - 1) / m;
        const oadevEdfHere = greenhallEdf({ ...oadev, nPhase });
        edf = Math.min(
          noEdgeLoss,
          TOTDEV_PM_B * tOverTau,
          Math.max(oadevEdfHere, (TOTDEV_PM_B / 2) * tOverTau),
        );
      } else {
        edf = Math.min(noEdgeLoss, totdevEdf(nPhase, m, noise));
      }
    }
  } else {
    edf = greenhallEdf({ ...DIFFERENCE_ESTIMATOR[kind], alpha, m, nPhase });
  }
  if (!Number.isFinite(edf) || edf < 1) return 1;
  return Math.min(edf, Math.max(1, terms));
}
