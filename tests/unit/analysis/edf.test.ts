import { describe, expect, it, test } from 'vitest';
import {
  chiSquareInterval,
  greenhallEdf,
  DIFFERENCE_ESTIMATOR,
  mdev,
  ohdev,
  oadevEdf,
  stabilityEdf,
  type NoiseType,
} from '../../../shared/analysis';
import {
  exactEdf,
  exactTotdevEdf,
  phaseCoefficients,
  termCount,
  type ExactKind,
} from '../../helpers/exactEdf';
import { gaussian } from '../../helpers/random';

// Check values for the EDF come from an independent helper (tests/helpers/exactEdf.ts): the exact
// EDF 2(E V)²/Var V of a quadratic form in white Gaussian noise, computed from the estimator's
// coefficient vector — never from the function under test.

describe('EDF of the finite-difference estimators (Greenhall & Riley, PTTI 2003)', () => {
  const kinds: ExactKind[] = ['adev', 'oadev', 'mdev', 'hdev', 'ohdev'];
  const cases: Array<[ExactKind, 'x' | 'y', number]> = [];
  for (const kind of kinds)
    for (const white of ['x', 'y'] as const)
      for (const m of [1, 2, 3, 4, 16, 64, 100, 256]) cases.push([kind, white, m]);

  test.each(cases)(
    '%s with noise white in %s at m = %i equals the exact value (N = 1001)',
    (kind, white, m) => {
      const N = 1001;
      const terms = termCount(kind, N, m);
      if (terms < 1) return;
      const noise: NoiseType = white === 'x' ? 'wpm' : 'wfm';
      const exact = exactEdf(kind, N, m, white); // independent helper, exact
      const edf = stabilityEdf(kind, N, m, terms, noise);
      // Exact to rounding below the Riemann grid (J ≤ 400); on the grid within 1e-4 relative.
      expect(Math.abs(edf / exact - 1)).toBeLessThan(1e-4);
    },
  );

  it('no longer overstates MDEV for white PM (the old effective-length rule gave 1.7×, 25×, 66×)', () => {
    // exact values from the helper, N = 1001 (1.71×, 25.4×, 66.2× were the old code's ratios)
    for (const [m, exact] of [
      [4, exactEdf('mdev', 1001, 4, 'x')],
      [64, exactEdf('mdev', 1001, 64, 'x')],
      [256, exactEdf('mdev', 1001, 256, 'x')],
    ]) {
      const edf = stabilityEdf('mdev', 1001, m, termCount('mdev', 1001, m), 'wpm');
      expect(edf / exact).toBeGreaterThan(0.9999);
      expect(edf / exact).toBeLessThan(1.0001);
    }
  });

  it('TDEV has the EDF of MDEV (a fixed multiple of it)', () => {
    expect(stabilityEdf('tdev', 1001, 16, 954, 'wpm')).toBe(
      stabilityEdf('mdev', 1001, 16, 954, 'wpm'),
    );
  });

  test.each(['wpm', 'wfm', 'ffm', 'rwfm'] as const)(
    'agrees with SP 1065 Table 5 (OADEV, %s) within 12 %',
    (noise) => {
      // SP 1065 Table 5 gives approximate formulas; the general algorithm refines them.
      for (const m of [2, 4, 16, 64]) {
        const table = oadevEdf(1025, m, noise);
        const edf = stabilityEdf('oadev', 1025, m, 1025 - 2 * m, noise);
        expect(Math.abs(edf / table - 1)).toBeLessThan(0.12);
      }
    },
  );

  it('is continuous where the algorithm switches to its Riemann grid and to the continuous average', () => {
    for (const noise of ['fpm', 'wfm', 'ffm', 'rwfm'] as const) {
      for (const kind of ['oadev', 'mdev', 'ohdev'] as const) {
        const at = (m: number) => stabilityEdf(kind, 100_001, m, 1000, noise) * m; // ~ flat in m·EDF
        for (const m of [64, 65, 133, 134, 100, 101])
          expect(Math.abs(at(m + 1) / at(m) - 1)).toBeLessThan(0.03);
      }
    }
  });

  it('refuses a noise the difference order cannot handle', () => {
    expect(() =>
      greenhallEdf({ ...DIFFERENCE_ESTIMATOR.oadev, alpha: -3, m: 1, nPhase: 100 }),
    ).toThrow(RangeError);
    expect(
      greenhallEdf({ ...DIFFERENCE_ESTIMATOR.ohdev, alpha: -3, m: 4, nPhase: 100 }),
    ).toBeGreaterThan(1);
  });
});

describe('EDF of TOTDEV (Driftbench rule, checked against the exact quadratic form)', () => {
  it('equals OADEV at m = 1, where TOTVAR is OVAR term for term (the old code capped it at N − 2)', () => {
    const N = 129;
    expect(stabilityEdf('totdev', N, 1, N - 2, 'wfm')).toBeCloseTo(exactTotdevEdf(N, 1, 'y'), 6);
    expect(stabilityEdf('totdev', N, 1, N - 2, 'wpm')).toBeCloseTo(exactTotdevEdf(N, 1, 'x'), 6);
  });

  test.each([2, 4, 8, 16, 32, 64])('white FM at m = %i lies within 3 % of exact (N = 129)', (m) => {
    const exact = exactTotdevEdf(129, m, 'y');
    expect(Math.abs(stabilityEdf('totdev', 129, m, 127, 'wfm') / exact - 1)).toBeLessThan(0.03);
  });

  test.each([2, 4, 8, 16, 32, 64])(
    'white PM at m = %i never exceeds exact by more than 5 % (N = 129)',
    (m) => {
      const exact = exactTotdevEdf(129, m, 'x');
      expect(stabilityEdf('totdev', 129, m, 127, 'wpm') / exact).toBeLessThan(1.05);
    },
  );
});

describe('χ² intervals from the EDF', () => {
  it('reproduces the published 90 % interval for 10 degrees of freedom', () => {
    // NIST TN 1337 §12.1.7, eqs 12-37 … 12-39: s² = 3 with df = 10 gives 1.64 < σ² < 7.61 at 90 %
    const r = chiSquareInterval(Math.sqrt(3), 10, 0.9);
    expect(r.lo ** 2).toBeCloseTo(1.64, 2);
    expect(r.hi ** 2).toBeCloseTo(7.61, 2);
  });
});

/** The expected value of an estimator for unit white noise, from its coefficient vector (exact). */
function trueDeviation(kind: 'mdev' | 'ohdev', m: number, white: 'x' | 'y', sigma: number): number {
  const cx = phaseCoefficients(kind, m);
  let c: Float64Array = cx;
  if (white === 'y') {
    c = new Float64Array(cx.length - 1);
    let tail = 0;
    for (let i = cx.length - 2; i >= 0; i--) c[i] = tail += cx[i + 1];
  }
  const r0 = c.reduce((s, v) => s + v * v, 0) * sigma * sigma;
  // MVAR = E[(Σ Δ²x)²]/(2m⁴τ0²) and OHVAR = E[(Δ³x)²]/(6m²τ0²) with τ0 = 1 (SP 1065 eqs 14, 20)
  return Math.sqrt(kind === 'mdev' ? r0 / (2 * m ** 4) : r0 / (6 * m * m));
}

describe('Monte Carlo coverage of the 68.3 % intervals (seeded)', () => {
  // 400 trials per case; the fraction of intervals that contain the true value must lie in 60–76 %
  // (the acceptance band; ±3.4 binomial standard errors around 68.3 %).
  const TRIALS = 400;
  const N = 512;
  test.each([
    ['mdev', 'x', 8],
    ['mdev', 'x', 32],
    ['mdev', 'y', 8],
    ['mdev', 'y', 32],
    ['ohdev', 'x', 8],
    ['ohdev', 'x', 32],
    ['ohdev', 'y', 8],
    ['ohdev', 'y', 32],
  ] as const)('%s, white %s, m = %i', (kind, white, m) => {
    const g = gaussian(1000 + m + (white === 'x' ? 0 : 7) + (kind === 'mdev' ? 0 : 13));
    const truth = trueDeviation(kind, m, white, 1);
    const noise = white === 'x' ? 'wpm' : 'wfm';
    const estimator = kind === 'mdev' ? mdev : ohdev;
    let inside = 0;
    for (let trial = 0; trial < TRIALS; trial++) {
      const data = new Float64Array(N);
      for (let i = 0; i < N; i++) data[i] = g();
      // white PM: the data are phase; white FM: the data are frequency
      const [p] = estimator(data, 1, [m], { noise, data: white === 'x' ? 'phase' : 'frequency' });
      if (p.lo <= truth && truth <= p.hi) inside++;
    }
    const coverage = inside / TRIALS;
    expect(coverage).toBeGreaterThan(0.6);
    expect(coverage).toBeLessThan(0.76);
  });
});
