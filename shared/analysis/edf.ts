import type { NoiseType } from './noise';
import type { StabilityKind } from './taus';

/**
 * Simple EDF of the overlapping Allan variance, NIST SP 1065 Table 5 (after Howe, Allan &
 * Barnes), for N phase points and averaging factor m. May be < 1 or non-finite at the edges:
 * callers clamp (see stabilityEdf).
 */
export function oadevEdf(nPhase: number, m: number, noise: NoiseType): number {
  const N = nPhase;
  switch (noise) {
    case 'wpm':
      return ((N + 1) * (N - 2 * m)) / (2 * (N - m));
    case 'fpm':
      return Math.exp(Math.sqrt(Math.log((N - 1) / (2 * m)) * Math.log(((2 * m + 1) * (N - 1)) / 4)));
    case 'wfm':
      return ((3 * (N - 1)) / (2 * m) - (2 * (N - 2)) / N) * ((4 * m * m) / (4 * m * m + 5));
    case 'ffm':
      return m === 1 ? (2 * (N - 2) ** 2) / (2.3 * N - 4.9) : (5 * N * N) / (4 * m * (N + 3 * m));
    case 'rwfm':
      return ((N - 2) / m) * (((N - 1) ** 2 - 3 * m * (N - 1) + 4 * m * m) / (N - 3) ** 2);
  }
}

/** (b, c) of the TOTDEV EDF b·(T/τ) − c, NIST SP 1065 Table 7; PM noise uses white FM's. */
const TOTDEV_BC: Readonly<Record<NoiseType, readonly [number, number]>> = {
  wpm: [1.5, 0], // no PM entry in Table 7: white FM coefficients (Driftbench's choice)
  fpm: [1.5, 0],
  wfm: [1.5, 0],
  ffm: [1.17, 0.22],
  rwfm: [0.93, 0.36],
};

/** TOTDEV EDF b·(T/τ) − c (NIST SP 1065 Table 7), T/τ = (N_phase − 1)/m; PM → white FM. */
export function totdevEdf(nPhase: number, m: number, noise: NoiseType): number {
  const [b, c] = TOTDEV_BC[noise];
  return (b * (nPhase - 1)) / m - c;
}

/**
 * EDF used for each estimator's χ² interval, clamped to [1, terms] (a sum of `terms` correlated
 * squared Gaussians cannot have more degrees of freedom than terms). Driftbench's approximation
 * for the kinds SP 1065 Table 5 does not cover: the Table 5 OADEV formula evaluated with an
 * effective length that gives it the same number of terms as the estimator, N_eff = terms + 2m',
 *  - OADEV: exact Table 5 (N_eff = N);
 *  - ADEV, HDEV (non-overlapping): m' = 1 on the series decimated by m (ADEV at m is ADEV at 1 of
 *    the decimated phase, whose noise type is the same power law);
 *  - OHDEV: m' = m, N_eff = N − m; MDEV and TDEV: m' = m, N_eff = N − m + 1;
 *  - TOTDEV: SP 1065 Table 7 (at small m it exceeds the OADEV value; TOTDEV equals OADEV at m = 1).
 */
export function stabilityEdf(
  kind: StabilityKind,
  nPhase: number,
  m: number,
  terms: number,
  noise: NoiseType,
): number {
  let edf: number;
  switch (kind) {
    case 'oadev':
      edf = oadevEdf(nPhase, m, noise);
      break;
    case 'adev':
    case 'hdev':
      edf = oadevEdf(terms + 2, 1, noise);
      break;
    case 'ohdev':
    case 'mdev':
    case 'tdev':
      edf = oadevEdf(terms + 2 * m, m, noise);
      break;
    case 'totdev':
      edf = totdevEdf(nPhase, m, noise);
      break;
  }
  if (!Number.isFinite(edf) || edf < 1) return 1;
  return Math.min(edf, Math.max(1, terms));
}
