import { describe, expect, it, test } from 'vitest';
import { randomWalkFm } from '../../helpers/random';
import {
  adev,
  AnalysisError,
  allMs,
  decadeMs,
  hdev,
  mdev,
  oadev,
  octaveMs,
  ohdev,
  stability,
  STABILITY_KINDS,
  summarize,
  tdev,
  totdev,
  frequencyToPhase,
  type StabilityKind,
} from '../../../shared/analysis';

// NBS Monograph 140 / NIST SP 1065 Tables 29–30: the nine-point frequency set, τ0 = 1.
const NINE = [892, 809, 823, 798, 671, 644, 883, 903, 677];

describe('stability estimators on the NIST nine-point set', () => {
  test.each([
    // kind, m, published value, source
    ['adev', 1, 91.22945], // SP 1065 Table 30
    ['adev', 2, 115.8082], // SP 1065 Table 30
    ['oadev', 1, 91.22945], // SP 1065 Table 30
    ['oadev', 2, 85.95287], // SP 1065 Table 30
    ['mdev', 1, 91.22945], // SP 1065 Table 30
    ['mdev', 2, 74.78849], // SP 1065 Table 30
    ['tdev', 1, 52.67135], // SP 1065 Table 30
    ['tdev', 2, 86.35831], // SP 1065 Table 30
    ['hdev', 1, 70.80607], // SP 1065 Table 30
    ['hdev', 2, 116.798], // SP 1065 Table 30 (116.7980)
    ['ohdev', 1, 70.80607], // SP 1065 Table 30
    ['ohdev', 2, 85.61487], // SP 1065 Table 30
    ['totdev', 1, 91.22945], // SP 1065 Table 30
    ['totdev', 2, 93.90379], // SP 1065 Table 30
  ] as const)('%s at m = %i matches the published %f', (kind, m, expected) => {
    const [point] = stability(kind, NINE, 1, [m]).points;
    // published to 7 significant figures: agree to within half a unit of the last digit
    expect(Math.abs(point.dev - expected)).toBeLessThan(
      0.5 * 10 ** (Math.floor(Math.log10(expected)) - 6),
    );
  });

  it('gives the same values from the phase form of the data', () => {
    const x = frequencyToPhase(NINE, 1);
    for (const kind of STABILITY_KINDS) {
      const fromY = stability(kind, NINE, 1, [1, 2]).points.map((p) => p.dev);
      const fromX = stability(kind, x, 1, [1, 2], { data: 'phase' }).points.map((p) => p.dev);
      fromX.forEach((d, i) => expect(d).toBeCloseTo(fromY[i], 9));
    }
  });

  it('reproduces the published sample standard deviation 100.9770 (SP 1065 Table 29)', () => {
    expect(summarize(NINE).sd).toBeCloseTo(100.977, 4);
  });

  test.each([
    // kind, m, terms in the sum (from the sum limits of SP 1065 eqs 6–25, N = 10 phase points)
    ['oadev', 2, 6], // N − 2m
    ['adev', 2, 3], // ⌊(N − 1)/m⌋ − 1
    ['mdev', 2, 5], // N − 3m + 1
    ['ohdev', 2, 4], // N − 3m
    ['hdev', 2, 2], // ⌊(N − 1)/m⌋ − 2
    ['totdev', 2, 8], // N − 2
  ] as const)('%s at m = %i sums %i terms', (kind, m, terms) => {
    expect(stability(kind, NINE, 1, [m]).points[0].n).toBe(terms);
  });

  it('scales τ by τ0 and TDEV by τ/√3 (SP 1065 eq 15)', () => {
    const [p] = tdev(NINE, 2, [2]);
    const [q] = mdev(NINE, 2, [2]);
    expect(p.tau).toBe(4);
    expect(p.dev).toBeCloseTo((4 / Math.sqrt(3)) * q.dev, 12);
  });

  it('brackets every deviation by its χ² interval', () => {
    for (const kind of STABILITY_KINDS) {
      for (const p of stability(kind, NINE, 1).points) {
        expect(p.lo).toBeLessThan(p.dev);
        expect(p.hi).toBeGreaterThan(p.dev);
        expect(p.edf).toBeGreaterThanOrEqual(1);
      }
    }
  });
});

describe('MDEV on a long random-walk series', () => {
  it('matches the direct double sum of SP 1065 eq 14', () => {
    const y = randomWalkFm(3000, 1e-12, 5);
    const x = frequencyToPhase(y, 1);
    const N = x.length;
    for (const m of [1, 3, 16, 100, 700]) {
      let outer = 0;
      for (let j = 0; j <= N - 3 * m; j++) {
        let inner = 0;
        for (let i = j; i < j + m; i++) inner += x[i + 2 * m] - 2 * x[i + m] + x[i];
        outer += inner * inner;
      }
      const direct = Math.sqrt(outer / (2 * m ** 4 * (N - 3 * m + 1)));
      const [p] = mdev(y, 1, [m]);
      expect(Math.abs(p.dev / direct - 1)).toBeLessThan(1e-9);
    }
  });
});

describe('averaging-factor sets', () => {
  test.each([
    // kind, frequency points, expected octave m (limits from SP 1065 sums, N = n + 1 phase points)
    ['oadev', 9, [1, 2, 4]], // N − 2m ≥ 1 → m ≤ 4
    ['mdev', 9, [1, 2]], // N − 3m + 1 ≥ 1 → m ≤ 3
    ['hdev', 9, [1, 2]], // N − 3m ≥ 1 → m ≤ 3
    ['totdev', 9, [1, 2, 4]], // τ ≤ T/2
    ['oadev', 1000, [1, 2, 4, 8, 16, 32, 64, 128, 256]],
  ] as const)('octaveMs for %s on %i points is %j', (kind, n, expected) => {
    expect(octaveMs(n, kind)).toEqual(expected);
  });

  it('steps decades 1-2-5 and stops at the longest supported m', () => {
    expect(decadeMs(1000, 'oadev')).toEqual([1, 2, 5, 10, 20, 50, 100, 200, 500]);
    expect(decadeMs(1000, 'ohdev')).toEqual([1, 2, 5, 10, 20, 50, 100, 200]);
  });

  it('lists every supported m for allMs', () => {
    expect(allMs(9, 'oadev')).toEqual([1, 2, 3, 4]);
    expect(allMs(9, 'mdev')).toEqual([1, 2, 3]);
  });

  it('counts phase points directly for phase data', () => {
    expect(octaveMs(10, 'oadev', 'phase')).toEqual([1, 2, 4]);
  });
});

describe('unsupported and invalid input', () => {
  it('leaves out unsupported m and reports why', () => {
    const r = stability('oadev', NINE, 1, [1, 5, 0, 1.5]);
    expect(r.points.map((p) => p.m)).toEqual([1]);
    expect(r.skipped.map((s) => s.m)).toEqual([5, 0, 1.5]);
    expect(r.skipped[0].reason).toMatch(/at most m = 4/);
  });

  it('returns only the points from the per-kind functions', () => {
    const fns: Record<StabilityKind, typeof adev> = {
      adev,
      oadev,
      mdev,
      tdev,
      hdev,
      ohdev,
      totdev,
    };
    for (const kind of STABILITY_KINDS) {
      expect(fns[kind](NINE, 1, [1, 2, 99]).map((p) => p.m)).toEqual([1, 2]);
    }
  });

  test.each([
    ['an empty series', [], 1, 'empty'],
    ['a NaN reading', [1, Number.NaN, 3], 1, 'non-finite'],
    ['an infinite reading', [1, Infinity, 3], 1, 'non-finite'],
    ['a zero τ0', [1, 2, 3], 0, 'bad-argument'],
    ['a negative τ0', [1, 2, 3], -1, 'bad-argument'],
  ] as const)('refuses %s', (_, values, tau0, code) => {
    expect(() => oadev(values, tau0)).toThrow(AnalysisError);
    try {
      oadev(values, tau0);
    } catch (e) {
      expect((e as AnalysisError).code).toBe(code);
    }
  });

  it('returns no points, never NaN, when the series is too short for any τ', () => {
    const r = stability('hdev', [1, 2], 1);
    expect(r.points).toEqual([]);
    expect(stability('hdev', [1, 2], 1, [1]).skipped).toHaveLength(1);
  });

  it('keeps the given noise type and marks its source', () => {
    const [p] = oadev(NINE, 1, [1], { noise: 'rwfm' });
    expect(p.noise).toBe('rwfm');
    expect(p.noiseSource).toBe('given');
  });

  it('falls back to white FM when the set is too short to identify noise, and does not label it', () => {
    const [p] = oadev(NINE.slice(0, 6), 1, [1]);
    expect(p.noiseSource).toBe('default');
    expect(p.noise).toBe('wfm');
    expect(p.noiseSupported).toBe(false);
  });

  it('reads the B1 ratio where lag-1 has too few points, unlabelled without a slope to confirm it', () => {
    const [p] = oadev(NINE, 1, [1]);
    expect(p.noiseSource).toBe('b1');
    expect(p.noiseSupported).toBe(false);
  });
});
