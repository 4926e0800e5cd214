import { AnalysisError, assertNumber } from './errors';

/** Standard gravity g_n = 9.80665 m/s², exact (3rd CGPM 1901; ISO 80000-3). */
export const G_N = 9.80665;

/** WGS84 normal gravity at the equator γe, m/s² (NIMA TR8350.2, 3rd ed.). */
export const WGS84_GAMMA_E = 9.7803253359;
/** WGS84 normal gravity at the poles γp, m/s² (NIMA TR8350.2, 3rd ed.). */
export const WGS84_GAMMA_P = 9.8321849378;
/** Somigliana constant k (NIMA TR8350.2, 3rd ed.). */
export const WGS84_K = 0.00193185265241;
/** First eccentricity squared e² (NIMA TR8350.2, 3rd ed.). */
export const WGS84_E2 = 0.00669437999013;
/** Free-air gradient, m/s² per metre of height (common approximation). */
export const FREE_AIR_GRADIENT = -3.086e-6;

/**
 * WGS84 normal gravity in m/s² by Somigliana's formula γ(φ) = γe(1 + k·sin²φ)/√(1 − e²·sin²φ)
 * (NIMA TR8350.2 3rd ed.; NGA.STND.0036) plus the free-air term −3.086e-6·h. Domain:
 * −90 ≤ latDeg ≤ 90, finite height in metres (the linear free-air term suits bench heights).
 */
export function wgs84Gravity(latDeg: number, heightM = 0): number {
  assertNumber(latDeg, 'latDeg');
  assertNumber(heightM, 'heightM');
  if (latDeg < -90 || latDeg > 90)
    throw new AnalysisError('bad-argument', 'latitude must be within ±90°');
  const s = Math.sin((latDeg * Math.PI) / 180);
  const s2 = s * s;
  return (
    (WGS84_GAMMA_E * (1 + WGS84_K * s2)) / Math.sqrt(1 - WGS84_E2 * s2) +
    FREE_AIR_GRADIENT * heightM
  );
}
