// Issue 8, the budget and comparison half: coverage from ν_eff, shared tuning-fork inputs,
// reference ageing, counter type, drift, asymmetric limits and two-axis tilt. Each expected value
// names its source; none comes from the function under test.
import { describe, expect, it, test } from 'vitest';
import {
  combineCorrelated,
  combineUncertainty,
  compare,
  counterResolution,
  coverageFactor,
  fitDrift,
  guardBandVerdictInterval,
  stability,
  tiltFromAxes,
  tuningForkDelta,
  tuningForkShift,
  uncertaintyBudget,
} from '../../../shared/analysis';
import { gaussian } from '../../helpers/random';

const FORK = { B: -0.034, uB: 0.006 / Math.sqrt(3), T0: 25, uT0: 5 / Math.sqrt(3) };
const THERMO = { uReading: 0.3, uBias: 0.5, labRange: [18, 28] as const };

describe('coverage factor from ν_eff (JCGM 100:2008 G.4–G.6)', () => {
  test.each([
    // ν_eff, p, k — Student t quantiles from scipy.stats.t.ppf (independent helper), floor 2.00
    [1, 0.95, 12.706205], // t_0.975(1)
    [2, 0.95, 4.302653], // t_0.975(2)
    [8, 0.95, 2.306004], // t_0.975(8)
    [8.9, 0.95, 2.306004], // truncated to 8 (G.6.4)
    [16.75, 0.99, 2.920782], // GUM H.1: ν_eff 16.7 → 16, t99(16) = 2.92 (REFERENCES)
    [100, 0.95, 2], // t = 1.984 (scipy) is below Driftbench's floor of 2.00
    [Infinity, 0.95, 2], // normal 1.960 (scipy), floor 2.00
    [1e20, 0.99, 2.575829], // huge but finite ν_eff: the normal quantile (scipy norm.ppf(0.995))
    [1e20, 0.95, 2], // 1.960, floor 2.00
  ])('ν_eff = %f at p = %f gives k = %f', (nu, p, k) => {
    expect(coverageFactor(nu, p).k).toBeCloseTo(k, 5);
  });

  it('says what it covers', () => {
    expect(coverageFactor(8).text).toBe('k = 2.31 from ν_eff = 8, about 95 % coverage');
    expect(coverageFactor(Infinity).text).toMatch(
      /^k = 2\.00 with ν_eff = ∞ .*at least 95 % coverage/,
    );
  });

  it('widens a capture budget whose Type A term rests on two degrees of freedom', () => {
    // Flicker FM: the ADEV at the span is the Type A line with ν = 2; every other line is small,
    // so ν_eff ≈ 2 and k = t_0.975(2) = 4.30 (scipy), not 2 as before issue 8.
    const b = uncertaintyBudget({
      stats: { n: 1000, mean: 16e6, sd: 0.01, sem: 0.0003 },
      nominal: 16e6,
      gateTime: 1,
      adevAtSpan: 1e-9,
      adevEdf: 2,
      noise: 'ffm',
      resolution: { kind: 'reciprocal', tRes: 1e-12 },
    });
    expect(b.effectiveDof).toBeGreaterThan(2);
    expect(b.effectiveDof).toBeLessThan(2.01);
    expect(b.k).toBeCloseTo(4.302653, 5); // scipy t_0.975(2)
    expect(b.expanded).toBeCloseTo(4.302653 * b.combined, 6);
    expect(b.coverage).toMatch(/^k = 4\.30 from ν_eff = 2(\.0\d)?, about 95 % coverage$/);
  });

  it('combines ν_eff across both sides of a comparison', () => {
    // Two sides each with one Type A line u = 1 Hz, ν = 4: Welch–Satterthwaite (G.2b) gives
    // ν_eff = (1 + 1)² / (1/4 + 1/4) = 8 (computed by hand), k = t_0.975(8) = 2.306 (scipy).
    const side = (mean: number) => ({
      mean,
      u: 1,
      components: [
        {
          name: 'Type A',
          value: 1,
          contribution: 1,
          dof: 4,
          type: 'A' as const,
          distribution: 't' as const,
        },
      ],
    });
    const r = compare(side(0), side(0.5), { limit: 10, limitUnit: 'Hz' });
    expect(r.effectiveDof).toBeCloseTo(8, 12);
    expect(r.k).toBeCloseTo(2.306004, 5);
    expect(r.expandedUncertainty).toBeCloseTo(2.306004 * Math.SQRT2, 5);
    expect(r.coverage).toBe('k = 2.31 from ν_eff = 8, about 95 % coverage');
  });
});

describe('correlated inputs (JCGM 100:2008 §5.2, eq. 16)', () => {
  it('reproduces the GUM H.2 resistance, reactance and impedance example', () => {
    // JCGM 100:2008 H.2 (values from memory): V = 4.9990 V, u = 0.0032 V; I = 19.6610 mA,
    // u = 0.0095 mA; φ = 1.04446 rad, u = 0.00075 rad; r(V,I) = −0.36, r(V,φ) = 0.86,
    // r(I,φ) = −0.65. Printed results: u(R) = 0.071 Ω, u(X) = 0.295 Ω, u(Z) = 0.236 Ω.
    // Sensitivities are the model's partial derivatives, written out here by hand.
    const V = 4.999;
    const I = 19.661e-3;
    const phi = 1.04446;
    const u = [0.0032, 0.0095e-3, 0.00075];
    const r = [
      [1, -0.36, 0.86],
      [-0.36, 1, -0.65],
      [0.86, -0.65, 1],
    ];
    const inputs = (c: number[]) => c.map((s, i) => ({ value: u[i], sensitivity: s }));
    const uR = combineCorrelated(
      inputs([Math.cos(phi) / I, (-V * Math.cos(phi)) / I ** 2, (-V * Math.sin(phi)) / I]),
      r,
    );
    const uX = combineCorrelated(
      inputs([Math.sin(phi) / I, (-V * Math.sin(phi)) / I ** 2, (V * Math.cos(phi)) / I]),
      r,
    );
    const uZ = combineCorrelated(inputs([1 / I, -V / I ** 2, 0]), r);
    expect(Math.abs(uR - 0.071)).toBeLessThan(0.0015); // GUM H.2: 0.071 (the rounded inputs give 0.0700)
    expect(Math.abs(uX - 0.295)).toBeLessThan(0.001); // GUM H.2: 0.295
    expect(Math.abs(uZ - 0.236)).toBeLessThan(0.001); // GUM H.2: 0.236
    // Without the correlations the answer is clearly different (eq. 10 over the same lines).
    const independent = combineUncertainty(inputs([1 / I, -V / I ** 2, 0])).uc;
    expect(Math.abs(independent - uZ)).toBeGreaterThan(0.01);
  });

  it('cancels one input used twice with opposite signs', () => {
    // r = 1, c = ±1, equal u: u_c = |u − u| = 0 (eq. 16, computed by hand)
    expect(
      combineCorrelated(
        [
          { value: 3, sensitivity: 1 },
          { value: 3, sensitivity: -1 },
        ],
        [
          [1, 1],
          [1, 1],
        ],
      ),
    ).toBe(0);
  });
});

describe('tuning-fork normalisation with shared T0 and B', () => {
  test.each([
    // T °C, shift ppm — REFERENCES "Crystals and temperature": B = −0.034 at −40 °C gives
    // −143.65 ppm and at +85 °C −122.4 ppm (computed by hand from the parabola: −0.034 × 65²,
    // −0.034 × 60²; not from a maker's document).
    [-40, -143.65],
    [85, -122.4],
  ])('the parabola at %f °C is %f ppm', (T, ppm) => {
    expect(tuningForkShift(T, { B: -0.034, T0: 25 })).toBeCloseTo(ppm, 9);
  });

  it('carries T0 with ∂Δ/∂T0 = 2B(T_a − T_b) when the ambient moved 20 → 30 °C', () => {
    // Issue 8: 2 × 0.034 × 10 = 0.68 ppm/°C; u(T0) = 5/√3 °C (25 ± 5 °C rectangular) → 1.96 ppm
    // (computed by hand), "about 2 ppm of standard uncertainty".
    const d = tuningForkDelta(20, 30, FORK, THERMO);
    const t0 = d.terms.find((t) => t.symbol === 'u_T0')!;
    expect(t0.sensitivityPpm).toBeCloseTo(-0.68, 12);
    expect(Math.abs(t0.contributionPpm)).toBeCloseTo(0.68 * 2.886751, 5);
    const b = d.terms.find((t) => t.symbol === 'u_B')!;
    expect(b.sensitivityPpm).toBeCloseTo(-(25 - 25), 12); // (30−25)² − (20−25)² = 0, by hand
    const bias = d.terms.find((t) => t.symbol === 'u_Tbias')!;
    expect(bias.sensitivityPpm).toBeCloseTo(0.68, 12); // −2B[(5) − (−5)] = 0.68, by hand
  });

  it('turns a false "within" into "inconclusive" against ±2 ppm (issue 8 defect 3)', () => {
    // 32.768 kHz, true change 0.1 ppm, ambient 20 → 30 °C; the means carry the parabola.
    const f0 = 32768;
    const fAt = (T: number, ppm: number) => f0 * (1 + (ppm - 0.034 * (T - 25) ** 2) * 1e-6);
    const d = tuningForkDelta(20, 30, FORK, THERMO);
    const side = (T: number, ppm: number, shift: number) => ({
      mean: fAt(T, ppm) / (1 + shift * 1e-6),
      u: 1e-6 * f0 * 0.05,
      nominal: f0,
      unit: 'Hz',
    });
    const r = compare(side(20, 0, d.shiftBeforePpm), side(30, 0.1, d.shiftAfterPpm), {
      limit: 2,
      limitUnit: 'ppm',
      deltaTerms: d.terms.map((t) => ({ ...t, sensitivity: t.sensitivityPpm * f0 * 1e-6 })),
    });
    expect(r.deltaPpm).toBeCloseTo(0.1, 6);
    expect(r.u / f0 / 1e-6).toBeGreaterThan(1.96); // at least the T0 line
    expect(r.verdict).toBe('inconclusive');
  });

  it('never assumes 25 °C for a capture without ambient: the lab range widens U', () => {
    // T rectangular on 18–28 °C: E[s] = B[(23 − 25)² + 25/3] = −0.41933 ppm and
    // sd(s) = 0.46729 ppm (numerical integration with numpy, independent helper).
    const d = tuningForkDelta(23, null, FORK, THERMO);
    expect(d.shiftAfterPpm).toBeCloseTo(-0.419333, 5);
    const amb = d.terms.find((t) => t.name === 'Ambient not recorded (after)')!;
    expect(Math.abs(amb.contributionPpm)).toBeCloseTo(0.467286, 5);
    expect(d.notes.join(' ')).toMatch(/no ambient temperature/);
  });
});

describe('reference ageing between captures', () => {
  it('books ageing × days since verification in the capture budget', () => {
    // OCXO ageing 1e-10/day ± 5e-11/day, 30 days: √(1² + 0.5²)e-10 × 30 × 10 MHz = 0.0335 Hz (by hand)
    const b = uncertaintyBudget({
      stats: { n: 100, mean: 10e6, sd: 0.001, sem: 0.0001 },
      nominal: 10e6,
      gateTime: 1,
      noise: 'wfm',
      resolution: { kind: 'reciprocal' },
      reference: { offset: 0, u: 1e-11, ageing: { perDay: 1e-10, uPerDay: 5e-11, days: 30 } },
    });
    const line = b.components.find((c) => c.key === 'reference-ageing')!;
    expect(line.value).toBeCloseTo(Math.sqrt(1.25) * 1e-10 * 30 * 10e6, 9);
  });

  it('adds the reference change between captures to Δ even when the reference is shared', () => {
    const side = (mean: number) => ({
      mean,
      u: 0.01,
      components: [
        {
          name: 'Type A',
          value: 0.001,
          contribution: 0.001,
          dof: Infinity,
          type: 'A' as const,
          distribution: 'normal' as const,
        },
        {
          name: 'Reference offset',
          value: 0.1,
          contribution: 0.1,
          dof: Infinity,
          type: 'B' as const,
          distribution: 'normal' as const,
          key: 'reference-offset',
        },
      ],
      nominal: 10e6,
      unit: 'Hz',
    });
    // 20 days apart at 1e-10/day: 2e-9 × 10 MHz = 0.02 Hz (by hand)
    const ageing = {
      name: 'Reference change between captures',
      value: 20,
      unit: 'd',
      sensitivity: 1e-10 * 10e6,
      distribution: 'normal' as const,
      note: '',
    };
    const without = compare(side(10e6), side(10e6), {
      limit: 1,
      limitUnit: 'ppm',
      sameReference: true,
    });
    const withAgeing = compare(side(10e6), side(10e6), {
      limit: 1,
      limitUnit: 'ppm',
      sameReference: true,
      deltaTerms: [ageing],
    });
    expect(without.u).toBeCloseTo(Math.SQRT2 * 0.001, 12); // the shared offset cancels (eq. 16)
    expect(withAgeing.u).toBeCloseTo(Math.sqrt(2 * 0.001 ** 2 + 0.02 ** 2), 12);
  });
});

describe('counter type and resolution', () => {
  test.each([
    // kind, gate s, f Hz, resolution, ± Hz — general counter theory (REFERENCES, counters)
    ['gated', 1, 32768, 1, 1], // ±1 count in 1 s
    ['gated', 10, 10e6, 1, 0.1],
    ['reciprocal', 1, 32768, 1e-9, 32768e-9], // 1 ns in 1 s: 1e-9 relative
    ['time-interval', 10, 10e6, 20e-12, 10e6 * 2e-12], // 20 ps over τ = 10 s: 2e-12 relative
  ] as const)('%s counter, %f s gate at %f Hz', (kind, gateTime, f, res, hz) => {
    const r = counterResolution(
      kind === 'gated' ? { kind, gateTime, f, counts: res } : { kind, gateTime, f, tRes: res },
    );
    expect(r.absoluteHz).toBeCloseTo(hz, 12);
  });

  it('keeps the quantisation when every reading is identical (gated counter)', () => {
    // 400 identical readings from a gated counter, 1 s gate: s = 0, yet one count is ±1 Hz,
    // u = 1/√3 Hz (JCGM 100 §4.3.7), and U = 2/√3 Hz with ν_eff = ∞ (k floor 2.00).
    const b = uncertaintyBudget({
      stats: { n: 400, mean: 32768, sd: 0, sem: 0 },
      nominal: 32768,
      gateTime: 1,
      noise: 'wfm',
      resolution: { kind: 'gated', counts: 1 },
    });
    expect(b.combined).toBeCloseTo(1 / Math.sqrt(3), 12);
    expect(b.expanded).toBeCloseTo(2 / Math.sqrt(3), 12);
  });

  it('states every line in the capture unit when readings are in MHz', () => {
    // The same gated capture read in MHz: ±1 count in a 1 s gate is ±1 Hz = ±1e-6 MHz, so
    // u = 1e-6/√3 MHz (general counter theory, docs/references.md; JCGM 100 §4.3.7), with every
    // line in MHz (the budget once mixed a resolution in Hz with readings in MHz).
    const b = uncertaintyBudget({
      stats: { n: 400, mean: 16, sd: 0, sem: 0 },
      nominal: 16,
      unit: 'MHz',
      gateTime: 1,
      noise: 'wfm',
      resolution: { kind: 'gated', counts: 1 },
    });
    expect(b.combined).toBeCloseTo(1e-6 / Math.sqrt(3), 15);
    expect(b.components.every((line) => line.unit === 'MHz')).toBe(true);
    expect(b.components.find((line) => line.key === 'resolution')?.note).toContain(
      'MHz per reading',
    );
  });
});

describe('drift removal', () => {
  it('fits a quadratic drift like an independent least-squares fit', () => {
    // numpy.polyfit(t − t̄, y, 2) on t = 0…5, y = 1, 2, 2, 4, 7, 9 (independent helper):
    // slope at t̄ 1.628571, its standard error 0.136526, curvature 2a = 0.607143.
    const d = fitDrift([0, 1, 2, 3, 4, 5], [1, 2, 2, 4, 7, 9], 'quadratic');
    expect(d.ratePerSecond).toBeCloseTo(1.628571, 6);
    expect(d.rateStderrPerDay / 86400).toBeCloseTo(0.136526, 6);
    expect(d.curvaturePerDay2 / 86400 ** 2).toBeCloseTo(0.607143, 6);
    expect(d.detrended.reduce((s, v) => s + v, 0) / 6).toBeCloseTo(25 / 6, 12); // the mean is kept
  });

  it('removes a 1e-11/s drift so that long τ no longer reads as the drift', () => {
    // White FM 1e-11 at τ0 = 1 s plus a drift of 1e-11 per second over 2000 s. A linear drift
    // alone gives σ_y(τ) = D·τ/√2 (NIST SP 1065 §5.2.5, from memory): at τ = 512 s that is
    // 3.6e-9, far above the noise (1e-11/√512 ≈ 4.4e-13 for white FM, SP 1065 Table 3).
    const g = gaussian(8);
    const t = Array.from({ length: 2000 }, (_, i) => i);
    const y = t.map((s) => 1e-11 * g() + 1e-11 * s);
    const drifting = stability('oadev', y, 1, [512]).points[0].dev;
    const d = fitDrift(t, y, 'linear');
    const removed = stability('oadev', d.detrended, 1, [512]).points[0].dev;
    expect(drifting).toBeGreaterThan(1e-9);
    expect(removed).toBeLessThan(2e-12);
    expect(d.ratePerDay).toBeCloseTo(1e-11 * 86400, 9);
    // |D|·√((n² − 1)/12) for unit spacing (by hand), with D the true drift; the fit's D is within 1e-4
    const expected = (1e-11 * Math.sqrt(2000 ** 2 - 1)) / Math.sqrt(12);
    expect(Math.abs(d.trendSd / expected - 1)).toBeLessThan(1e-4);
  });

  it('puts the drift into the budget of the mean, in ppb/day', () => {
    const b = uncertaintyBudget({
      stats: { n: 100, mean: 10e6, sd: 0.001, sem: 0.0001 },
      nominal: 10e6,
      gateTime: 1,
      noise: 'wfm',
      resolution: { kind: 'reciprocal' },
      drift: { model: 'linear', trendSd: 2e-10, ratePerDay: 5e-9, rateStderrPerDay: 1e-10 },
    });
    const line = b.components.find((c) => c.key === 'drift')!;
    expect(line.value).toBeCloseTo(2e-10 * 10e6, 12);
    expect(line.note).toMatch(/5\.00 ± 0\.10 ppb\/day/);
  });
});

describe('asymmetric and one-sided limits (ILAC-G8:09/2019, guard band w = U on each side)', () => {
  test.each([
    // Δ, U, low, high, verdict — rule by hand: within when Δ + U ≤ hi and Δ − U ≥ lo; exceeds
    // when Δ − U > hi or Δ + U < lo
    [1.5, 0.4, -1, 2, 'within'], // 1.9 ≤ 2, 1.1 ≥ −1
    [1.5, 0.6, -1, 2, 'inconclusive'], // 2.1 > 2
    [-0.5, 0.4, -1, 2, 'within'],
    [-0.8, 0.4, -1, 2, 'inconclusive'], // −1.2 < −1
    [-1.5, 0.4, -1, 2, 'exceeds'], // −1.1 < −1
    [2.5, 0.4, -1, 2, 'exceeds'], // 2.1 > 2
    [-50, 1, null, 3, 'within'], // one-sided "ageing ≤ 3 ppm": no lower bound
    [2.5, 1, null, 3, 'inconclusive'],
    [4.5, 1, null, 3, 'exceeds'],
  ] as const)('Δ = %f, U = %f against [%s, %s] is %s', (delta, U, low, high, verdict) => {
    expect(guardBandVerdictInterval(delta, U, { low, high })).toBe(verdict);
  });

  it('compares against an asymmetric limit in ppm', () => {
    // −1/+2 ppm at 10 MHz is −10/+20 Hz; Δ = 15 Hz, U = 2·√2 Hz (k floor) → within (17.8 ≤ 20)
    const r = compare(
      { mean: 10e6, u: 1 },
      { mean: 10e6 + 15, u: 1 },
      { limitLow: -1, limitHigh: 2, limitUnit: 'ppm', nominal: 10e6 },
    );
    expect(r.limit.low).toBeCloseTo(-10, 9);
    expect(r.limit.high).toBeCloseTo(20, 9);
    expect(r.verdict).toBe('within');
    const s = compare(
      { mean: 10e6, u: 1 },
      { mean: 10e6 - 15, u: 1 },
      { limitLow: -1, limitHigh: 2, limitUnit: 'ppm', nominal: 10e6 },
    );
    expect(s.verdict).toBe('exceeds'); // −15 + 2.83 < −10
  });

  it('refuses crossed bounds', () => {
    expect(() => guardBandVerdictInterval(0, 0, { low: 2, high: 1 })).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
    expect(() => guardBandVerdictInterval(0, 0, { low: null, high: null })).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
  });
});

describe('tilt from two axes with local gravity', () => {
  it('reads 30° exactly where asin over one axis with g_n reads 29.9°', () => {
    // At the equator g = 9.7803253359 m/s² (WGS84, REFERENCES): 1 g local is 997.313 mg of g_n.
    // A 30° tilt reads 498.657 mg along and 863.700 mg normal (sin/cos by hand); atan2 gives 30°.
    const g = 9.7803253359;
    const oneG = (1000 * g) / 9.80665;
    const along = oneG * 0.5;
    const normal = (oneG * Math.sqrt(3)) / 2;
    const r = tiltFromAxes(along, normal, g);
    expect(r.tiltDeg).toBeCloseTo(30, 12);
    expect(r.magnitudeErrorPct).toBeCloseTo(0, 10);
    expect((Math.asin(along / 1000) * 180) / Math.PI).toBeLessThan(29.92); // the old method's bias
  });

  test.each([
    // along, normal, degrees — atan2 quadrants (by hand)
    [1000, 0, 90],
    [0, 1000, 0],
    [-1000, 0, -90],
    [1000, 1000, 45],
  ])('(%f, %f) mg is %f°', (a, n, deg) => {
    expect(tiltFromAxes(a, n).tiltDeg).toBeCloseTo(deg, 12);
  });
});
