// Review of the uncertainty code (findings F2, F5, F6, F11): each test failed before its fix.
// Expected values name their source; none comes from the function under test.
import { describe, expect, it } from 'vitest';
import {
  compare,
  counterResolution,
  liveDecision,
  tuningForkDelta,
} from '../../../shared/analysis';
import { gaussian, mulberry32 } from '../../helpers/random';

const FORK = { B: -0.034, uB: 0.006 / Math.sqrt(3), T0: 25, uT0: 5 / Math.sqrt(3) };
const THERMO = { uReading: 0.3, uBias: 0.5, labRange: [18, 28] as const };

/**
 * JCGM 101:2008 Monte Carlo of the full model Δ_T = −B[(T_a − T0)² − (T_b − T0)²] (seeded,
 * independent of the code under test): B, T0 rectangular; bias normal shared by recorded sides;
 * readings normal; an unrecorded ambient rectangular over 18–28 °C. Returns sd(Δ_T) in ppm.
 */
function monteCarloSd(Ta: number | null, Tb: number | null, draws = 200_000, seed = 8): number {
  const u = mulberry32(seed);
  const g = gaussian(seed + 1);
  const rect = (m: number, s: number) => m + (2 * u() - 1) * s * Math.sqrt(3);
  let s1 = 0;
  let s2 = 0;
  for (let i = 0; i < draws; i++) {
    const B = rect(FORK.B, FORK.uB);
    const T0 = rect(FORK.T0, FORK.uT0);
    const bias = g() * THERMO.uBias;
    const ta = Ta === null ? 18 + 10 * u() : Ta + bias + g() * THERMO.uReading;
    const tb = Tb === null ? 18 + 10 * u() : Tb + bias + g() * THERMO.uReading;
    const d = -B * ((ta - T0) ** 2 - (tb - T0) ** 2);
    s1 += d;
    s2 += d * d;
  }
  const m = s1 / draws;
  return Math.sqrt(s2 / draws - m * m);
}

const uOf = (d: ReturnType<typeof tuningForkDelta>) =>
  Math.sqrt(d.terms.reduce((s, t) => s + t.contributionPpm ** 2, 0));

describe('F2: tuning-fork Δ carries the product (second-order) terms', () => {
  it.each([
    // [before, after, review's Monte Carlo figure (400k draws, review8 F2)]
    [null, 25, 0.85],
    [null, null, 1.04],
    [null, 30, 1.58],
    [25, 25, 0.085],
  ] as const)(
    'ambient %s → %s °C: u agrees with a seeded Monte Carlo (review: %f ppm)',
    (tb, ta, review) => {
      const mc = monteCarloSd(ta, tb); // JCGM 101 Monte Carlo, independent helper above
      expect(Math.abs(mc - review) / review).toBeLessThan(0.03); // our MC reproduces the review's
      const d = tuningForkDelta(tb, ta, FORK, THERMO);
      expect(Math.abs(uOf(d) - mc) / mc).toBeLessThan(0.02);
    },
  );

  it('Δ = 0.6 ppm against ±2 ppm with both ambients missing is inconclusive, not within (review8 F2)', () => {
    const f0 = 32768;
    const d = tuningForkDelta(null, null, FORK, THERMO);
    const side = (ppm: number) => ({
      mean: f0 * (1 + ppm * 1e-6),
      u: 1e-6 * f0 * 0.05,
      nominal: f0,
      unit: 'Hz',
    });
    const r = compare(side(0), side(0.6), {
      limit: 2,
      limitUnit: 'ppm',
      deltaTerms: d.terms.map((t) => ({ ...t, sensitivity: t.sensitivityPpm * f0 * 1e-6 })),
    });
    // review: correct U ≈ 2.1 ppm (k = 2 × MC 1.04 ppm) → 0.6 + 2.1 > 2
    expect(r.expandedUncertainty / f0 / 1e-6).toBeGreaterThan(2.0);
    expect(r.verdict).toBe('inconclusive');
  });
});

describe('F6: the live decision never decides "within" on an incomplete budget', () => {
  it('uses k = t_0.975(n − 1) for the running mean', () => {
    // n = 5, only the running mean uncertain: k = t_0.975(4) = 2.776 (Student t table, from memory)
    const d = liveDecision({
      mean: 10,
      sd: 1,
      n: 5,
      baselineMean: 10,
      baselineU: 0,
      limit: 10,
      complete: true,
    });
    expect(d.U / (1 / Math.sqrt(5))).toBeCloseTo(2.776, 2);
  });

  it('a clear "within" is only a hint unless every term of the comparison is in', () => {
    // |Δ| + U = 0.5 + 2·0.1 ≪ 1 (by hand): looks within, but tuning-fork/T0/B terms are missing
    const d = liveDecision({
      mean: 10,
      sd: 1,
      n: 100,
      baselineMean: 9.5,
      baselineU: 0.05,
      limit: 1,
    });
    expect(d.verdict).toBe('within');
    expect(d.decided).toBe(false);
  });

  it('the Δ-only terms (T0, B) enter U: 20 → 30 °C is inconclusive, as the comparison says', () => {
    // review8 F6 / issue 8: T0 line 0.68 ppm/°C × 2.887 °C = 1.96 ppm (by hand); Δ = 0.1 ppm, L = 2 ppm
    const d = liveDecision({
      mean: 0.1,
      sd: 0.5,
      n: 400,
      baselineMean: 0,
      baselineU: 0.05,
      limit: 2,
      deltaTerms: [{ u: 1.963 }],
      complete: true,
    });
    expect(d.verdict).toBe('inconclusive');
    expect(d.decided).toBe(false);
  });
});

describe('F11: a gated counter resolution in the DUT unit', () => {
  it.each([
    // ±1 count / 1 s gate = ±1 Hz (counter theory, docs/references.md) = 1e-3 kHz = 1e-6 MHz
    ['Hz', 32768, 1],
    ['kHz', 32.768, 1e-3],
    ['MHz', 10, 1e-6],
  ] as const)('in %s', (unit, f, absolute) => {
    const r = counterResolution({ kind: 'gated', gateTime: 1, f, unit });
    expect(r.absolute).toBeCloseTo(absolute, 15);
    expect(r.absoluteHz).toBeCloseTo(1, 12);
    // relative = 1 Hz / f in Hz (by hand)
    expect(r.relative).toBeCloseTo(1 / (f * (unit === 'Hz' ? 1 : unit === 'kHz' ? 1e3 : 1e6)), 15);
  });
  it('a reciprocal counter scales with f in its own unit', () => {
    // 100 ps / 1 s = 1e-10 relative (counter theory); × 10 MHz = 1e-9 MHz = 1e-3 Hz (by hand)
    const r = counterResolution({ kind: 'reciprocal', gateTime: 1, f: 10, unit: 'MHz' });
    expect(r.absolute).toBeCloseTo(1e-9, 20);
    expect(r.absoluteHz).toBeCloseTo(1e-3, 15);
  });
});
