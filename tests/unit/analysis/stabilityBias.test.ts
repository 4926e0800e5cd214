import { describe, expect, it, test } from 'vitest';
import {
  adev,
  barnesAllanB2,
  barnesB1,
  expectedSlope,
  oadev,
  totdev,
  totdevBias,
} from '../../../shared/analysis';
import { frequencyCoefficients, phaseCoefficients } from '../../helpers/exactEdf';
import { gaussian, randomWalkFm, whiteFm } from '../../helpers/random';

describe('dead-time bias, Barnes & Allan B2 (NIST TN 1318)', () => {
  test.each([1.5, 2, 5, 10])(
    'is 1 for white FM at r = %f (dead time does not bias white FM)',
    (r) => {
      // TN 1318: B2(r, −1) = 1 (from memory; follows from independent readings)
      expect(barnesAllanB2(r, -1)).toBeCloseTo(1, 12);
    },
  );
  test.each([1.5, 2, 5])('is (3r − 1)/2 for random-walk FM at r = %f', (r) => {
    // TN 1318: B2(r, 1) = (3r − 1)/2 (from memory)
    expect(barnesAllanB2(r, 1)).toBeCloseTo((3 * r - 1) / 2, 12);
  });
  it('is 2/3 for white PM with any dead time and 1 without', () => {
    // four distinct phase samples (variance 4σ²) instead of three (6σ²): common practice, no source
    expect(barnesAllanB2(2, -2)).toBeCloseTo(2 / 3, 12);
    expect(barnesAllanB2(1, -2)).toBe(1);
  });
  it('is continuous in μ at flicker FM', () => {
    // the log form at μ = 0 is the limit of the power form (computed)
    const r = 3;
    const near = (mu: number) =>
      ((r + 1) ** (mu + 2) + (r - 1) ** (mu + 2) - 2 * r ** (mu + 2) - 2) / (4 * (2 ** mu - 1));
    expect(barnesAllanB2(r, 0)).toBeCloseTo(near(1e-6), 4);
  });

  it('corrects ADEV of a simulated counter with dead time to the value without it (white PM, seeded)', () => {
    // White phase x with σ = 1 ps; gate 1 s opening every 2 s: each reading (x(kT + g) − x(kT))/g
    // uses two fresh samples. Without dead time ADEV(g) = √3·σ/g (SP 1065 Table 3, white PM: the
    // second difference has variance 6σ²); with it √2·σ/g.
    const g = gaussian(42);
    const sigma = 1e-12;
    const n = 20000;
    const y = new Float64Array(n);
    for (let k = 0; k < n; k++) y[k] = (sigma * g() - sigma * g()) / 1;
    const [raw] = adev(y, 2, [1], { noise: 'wpm' });
    const [fixed] = adev(y, 2, [1], { noise: 'wpm', gateTime: 1 });
    const truth = Math.sqrt(3) * sigma;
    expect(Math.abs(raw.dev / truth - 1)).toBeGreaterThan(0.15); // biased low by √(2/3)
    expect(Math.abs(fixed.dev / truth - 1)).toBeLessThan(4 / Math.sqrt(2 * fixed.edf));
    expect(fixed.corrections).toEqual([{ kind: 'dead-time', ratio: 2 / 3 }]);
    expect(fixed.devRaw).toBe(raw.dev);
  });

  it('says so instead of correcting when the noise type is not identified', () => {
    const y = whiteFm(12, 1e-11, 3);
    const [p] = oadev(y, 2, [4], { gateTime: 1 });
    expect(p.noiseSupported).toBe(false);
    expect(p.corrections).toEqual([]);
    expect(p.uncorrected).toMatch(/noise type not identified/);
  });
});

describe('TOTDEV bias for random-walk FM (NIST SP 1065 §5.2.11)', () => {
  it('gives 1 − a·τ/T with a = 0.750 for random-walk FM and 1/(3 ln 2) for flicker FM', () => {
    // SP 1065 §5.2.11 (from memory): a = 0 (WFM), 0.481 (FFM), 0.750 (RWFM)
    expect(totdevBias('rwfm', 25, 100)).toBeCloseTo(1 - 0.75 / 4, 12);
    expect(totdevBias('ffm', 25, 100)).toBeCloseTo(1 - 0.481 / 4, 3);
    expect(totdevBias('wfm', 25, 100)).toBe(1);
    expect(totdevBias('wpm', 25, 100)).toBeNull();
  });

  it('brings the mean TOTVAR of simulated random-walk FM at τ = T/4 back to the true Allan variance', () => {
    // True AVAR of the discrete random walk y_k = y_{k−1} + w_k (unit steps) at m, exactly from
    // the coefficients of the second difference over w (independent helper; no code under test).
    const N = 256;
    const m = 64; // τ = T/4 (T = 256 readings × τ0)
    const cx = phaseCoefficients('oadev', m);
    const cw = frequencyCoefficients(frequencyCoefficients(cx)); // x → y → w
    const trueAvar = cw.reduce((s, v) => s + v * v, 0) / (2 * m * m);
    let sumRaw = 0;
    let sumFixed = 0;
    const trials = 300;
    for (let t = 0; t < trials; t++) {
      const y = randomWalkFm(N, 1, 1000 + t);
      const [p] = totdev(y, 1, [m], { noise: 'rwfm' });
      sumRaw += p.devRaw ** 2;
      sumFixed += p.dev ** 2;
    }
    const rawRatio = sumRaw / trials / trueAvar;
    const fixedRatio = sumFixed / trials / trueAvar;
    // Monte Carlo means over 300 seeded records; the scatter of the mean is about ±5 %.
    expect(rawRatio).toBeLessThan(0.9);
    expect(Math.abs(fixedRatio - 1)).toBeLessThan(0.1);
  });
});

describe('noise type per τ, supported or not', () => {
  it('labels white FM at every τ where lag-1 and the slope agree', () => {
    const y = whiteFm(16384, 1e-11, 11);
    const pts = oadev(y, 1);
    const labelled = pts.filter((p) => p.noiseSupported);
    expect(labelled.length).toBeGreaterThanOrEqual(pts.length - 3);
    expect(labelled.every((p) => p.noise === 'wfm')).toBe(true);
  });

  it('never labels a τ whose plotted slope contradicts the label (white FM with a strong drift)', () => {
    // White FM 1e-11 at τ0 = 1 s plus a drift of 1e-13/s: at long τ OADEV rises with slope ≈ +1
    // (SP 1065 §6: linear frequency drift gives σ_y ∝ τ), which no power-law label on its own fits.
    const n = 8192;
    const y = whiteFm(n, 1e-11, 5);
    for (let i = 0; i < n; i++) y[i] += 1e-13 * i;
    const pts = oadev(y, 1);
    for (const p of pts) {
      if (!p.noiseSupported || p.slope === null) continue;
      // a supported label's expected slope is within 0.75 of the plotted slope (half-way to the next)
      expect(Math.abs(p.slope - expectedSlope('oadev', p.noise))).toBeLessThan(0.75);
    }
    const last = pts[pts.length - 1];
    // the long-τ interval is not the tight white-PM one the old identification produced (±0.44 %)
    expect(last.hi / last.lo).toBeGreaterThan(1.5);
  });

  it('B1 matches its published closed forms', () => {
    // SP 1065 §5.6: B1(N, −1) = 1 for white FM; B1(N, 1) = N/2 for random-walk FM (computed from the formula)
    expect(barnesB1(10, -1)).toBeCloseTo(1, 12);
    expect(barnesB1(10, 1)).toBeCloseTo(5, 12);
    expect(barnesB1(10, 0)).toBeCloseTo((10 * Math.log(10)) / (18 * Math.LN2), 12);
  });
});
