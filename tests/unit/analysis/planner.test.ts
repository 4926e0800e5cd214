import { describe, expect, it } from 'vitest';
import {
  DecisionHold,
  fitNoiseModel,
  liveDecision,
  modelDev,
  planCapture,
  plannedU,
  stability,
  octaveMs,
  typicalModel,
} from '../../../shared/analysis/index';
import { FrequencyNoise, createRng } from '../../../simulators/noise';
import { gaussian, whiteFm } from '../../helpers/random';

/** OADEV curve of a fractional-frequency series with τ0 = 1 s. */
function oadev(y: Float64Array) {
  return stability('oadev', y, 1, octaveMs(y.length, 'oadev')).points.map((p) => ({
    tau: p.tau,
    dev: p.dev,
    edf: p.edf,
  }));
}

describe('fitting the white-FM-plus-floor model', () => {
  it('recovers a and the floor exactly from a curve built from the model', () => {
    // σ² = a/τ + b² with a = 1e-18, b = 1e-11 (common practice, no source: the model's own definition).
    const points = [1, 2, 4, 8, 16, 64, 256, 1024, 4096].map((tau) => ({
      tau,
      dev: Math.sqrt(1e-18 / tau + 1e-22),
    }));
    const m = fitNoiseModel(points);
    expect(m.a).toBeCloseTo(1e-18, 28);
    expect(m.floor / 1e-11).toBeCloseTo(1, 9);
  });

  it('keeps both terms non-negative: a flat curve is all floor, a pure 1/√τ curve has no floor', () => {
    const flat = fitNoiseModel(
      [1, 10, 100].map((tau, i) => ({ tau, dev: 1e-10 * (1 + 0.01 * i) })),
    );
    expect(flat.a).toBeGreaterThanOrEqual(0);
    expect(flat.floor).toBeGreaterThan(0.9e-10);
    const white = fitNoiseModel(
      [1, 10, 100, 1000].map((tau) => ({ tau, dev: 1e-9 / Math.sqrt(tau) })),
    );
    expect(white.floor).toBeLessThan(1e-13);
    expect(white.a).toBeCloseTo(1e-18, 27);
  });

  it('refuses a curve of fewer than two usable points', () => {
    expect(() => fitNoiseModel([{ tau: 1, dev: 1e-9 }])).toThrow(/two points/);
  });
});

describe('predictions against captures simulated with known noise', () => {
  it('white FM: the predicted scatter of a capture mean matches the scatter of simulated capture means', () => {
    const sigma = 1e-9; // white FM, σ_y(1 s) = 1e-9, τ0 = 1 s
    const model = fitNoiseModel(oadev(whiteFm(16_384, sigma, 7)));
    // For white FM the variance of an N-reading mean is σ²/N (common practice, no source).
    expect(Math.sqrt(model.a) / sigma).toBeGreaterThan(0.9);
    expect(Math.sqrt(model.a) / sigma).toBeLessThan(1.1);
    for (const T of [10, 100, 400]) {
      const g = gaussian(100 + T);
      const means: number[] = [];
      for (let c = 0; c < 600; c++) {
        let s = 0;
        for (let i = 0; i < T; i++) s += sigma * g();
        means.push(s / T);
      }
      const mu = means.reduce((a, b) => a + b, 0) / means.length;
      const sd = Math.sqrt(means.reduce((a, b) => a + (b - mu) ** 2, 0) / (means.length - 1));
      // 600 means: the sample sd is within ±10 % of the truth with overwhelming probability (χ², ν = 599).
      expect(modelDev(model, T) / sd).toBeGreaterThan(0.85);
      expect(modelDev(model, T) / sd).toBeLessThan(1.15);
    }
  });

  it('white plus flicker FM: the fitted floor is the simulated flicker level and no length beats it', () => {
    const rng = createRng(11);
    // simulators/noise.ts scales each component so that its own σ_y(τ0) equals the level.
    // White FM low enough that the flicker floor rules from τ ≈ 4 s; 4096 filter taps keep the
    // simulated flicker flat up to τ ≈ 4000 s.
    const noise = new FrequencyNoise({ wfm: 1e-10, ffm: 5e-11 }, rng, 4096);
    const y = new Float64Array(32_768);
    for (let i = 0; i < y.length; i++) y[i] = noise.next();
    const model = fitNoiseModel(oadev(y));
    // Flicker FM has a flat Allan deviation at its level (NIST SP 1065, power-law table), so the floor is ≈ 5e-11.
    expect(model.floor / 5e-11).toBeGreaterThan(0.6);
    expect(model.floor / 5e-11).toBeLessThan(1.5);
    // With no baseline the floor counts twice: U(∞) = 2·√2·b (k = 2).
    const plan = planCapture({
      model,
      limit: 1e-9,
      shift: 1e-9 - 2 * Math.SQRT2 * model.floor * 0.9,
      tau0: 1,
    });
    // A margin above U(∞) is decidable, and the plan's length brings U down to it.
    const ok = planCapture({ model, limit: 1e-9, shift: 1e-9 - 4 * model.floor, tau0: 1 });
    expect(ok.verdict).toBe('within');
    expect(plannedU({ model, tau0: 1 }, ok.shortest!)).toBeLessThanOrEqual(
      4 * model.floor * (1 + 1e-9),
    );
    expect(plan.Ufloor).toBeCloseTo(2 * Math.SQRT2 * model.floor, 20);
    expect(plan.verdict).toBe('undecidable');
    expect(plan.shortest).toBeNull();
  });
});

describe('the plan', () => {
  const model = { a: 1e-18, floor: 1e-11, source: 'measured' as const };

  it('finds the shortest capture at which U of Δ meets the margin, in closed form', () => {
    const plan = planCapture({ model, limit: 1e-9, shift: 0.5e-9, tau0: 1 });
    expect(plan.verdict).toBe('within');
    expect(plan.margin).toBeCloseTo(0.5e-9, 20);
    // U(T)² = 4·(2a/T + 2b²) = (0.5e-9)² → T = 8a / (0.25e-18 − 8e-22) = 32.10… s (hand-derived from the model).
    const expected = (8 * 1e-18) / (0.25e-18 - 8e-22);
    expect(plan.shortest).toBeCloseTo(expected, 6);
    expect(plannedU({ model, tau0: 1 }, plan.shortest!)).toBeCloseTo(0.5e-9, 18);
    // U falls with length along the whole curve.
    for (let i = 1; i < plan.curve.length; i++)
      expect(plan.curve[i].U).toBeLessThan(plan.curve[i - 1].U);
  });

  it('uses a measured baseline once instead of planning it, and the fixed inputs in quadrature', () => {
    const plan = planCapture({
      model,
      limit: 1e-9,
      shift: 2e-9,
      tau0: 1,
      baselineU: 1e-10,
      fixedU: 5e-11,
    });
    expect(plan.verdict).toBe('exceeds');
    // U(T)² = 4·(a/T + b² + uB² + uF²) = (1e-9)² → T = 4a / (1e-18 − 4·(1e-22 + 1e-20 + 2.5e-21)) (hand-derived).
    expect(plan.shortest).toBeCloseTo((4 * 1e-18) / (1e-18 - 4 * (1e-22 + 1e-20 + 2.5e-21)), 6);
  });

  it('never plans fewer than two readings, and says when the shift sits on the limit', () => {
    expect(
      planCapture({ model: { a: 0, floor: 0, source: 'measured' }, limit: 1, shift: 0, tau0: 10 })
        .shortest,
    ).toBe(20);
    expect(planCapture({ model, limit: 1e-9, shift: 1e-9, tau0: 1 }).verdict).toBe('undecidable');
    expect(() => planCapture({ model, limit: 0, shift: 0, tau0: 1 })).toThrow(/limit/);
  });

  it('has a typical model for every DUT kind and a generic one for unknown kinds', () => {
    for (const kind of [
      'crystal',
      'oscillator',
      'tcxo',
      'tuning-fork',
      'accelerometer',
      'capacitor',
    ]) {
      const m = typicalModel(kind);
      expect(m.source).toBe('typical');
      expect(m.a).toBeGreaterThan(0);
    }
  });
});

describe('the live decision', () => {
  it('is decided within once |Δ| + U ≤ L', () => {
    // mean 10, sd 1, n 100 → u_mean = 0.1; u = √(0.1² + 0.05²) = 0.1118; U = 0.2236 (hand-computed).
    // ν_eff = 0.0125²/(0.01²/99) = 155 → t = 1.98, Driftbench's floor k = 2 (coverageFactor).
    // Decided only because the caller says the budget is complete (review8 F6).
    const d = liveDecision({
      mean: 10,
      sd: 1,
      n: 100,
      baselineMean: 9.5,
      baselineU: 0.05,
      limit: 1,
      complete: true,
    });
    expect(d.U).toBeCloseTo(0.22361, 4);
    expect(d.Umean).toBeCloseTo(0.2, 10);
    expect(d.margin).toBeCloseTo(0.5, 12);
    expect(d).toMatchObject({ verdict: 'within', decided: true });
  });

  it('is decided exceeds once |Δ| − U > L, and undecided in between', () => {
    expect(
      liveDecision({ mean: 12, sd: 1, n: 100, baselineMean: 10, baselineU: 0.05, limit: 1 }),
    ).toMatchObject({ verdict: 'exceeds', decided: true });
    expect(
      liveDecision({ mean: 10.9, sd: 1, n: 100, baselineMean: 10, baselineU: 0.05, limit: 1 }),
    ).toMatchObject({ verdict: 'inconclusive', decided: false });
    expect(
      liveDecision({ mean: 10, sd: 1, n: 1, baselineMean: 10, baselineU: 0.05, limit: 1 }).decided,
    ).toBe(false);
  });

  it('on simulated captures with a true shift, the settled verdict (held for a quarter more readings) is the final one', () => {
    // 40 simulated captures: true Δ = 0.3 or 1.8 against L = 1, white noise sd 2 (common practice, no source).
    let settledCount = 0;
    for (let run = 0; run < 40; run++) {
      const shift = run % 2 ? 1.8 : 0.3;
      const g = gaussian(1000 + run);
      const hold = new DecisionHold();
      let sum = 0;
      let sum2 = 0;
      let settled: string | null = null;
      let last = '';
      for (let n = 1; n <= 4000; n++) {
        const v = shift + 2 * g();
        sum += v;
        sum2 += v * v;
        if (n < 2) continue;
        const mean = sum / n;
        const sd = Math.sqrt((sum2 - n * mean * mean) / (n - 1));
        const d = liveDecision({
          mean,
          sd,
          n,
          baselineMean: 0,
          baselineU: 0.02,
          limit: 1,
          complete: true,
        });
        if (settled === null && hold.update(n, d)) settled = d.verdict;
        last = d.verdict;
      }
      expect(settled).not.toBeNull();
      settledCount++;
      expect(settled).toBe(shift < 1 ? 'within' : 'exceeds');
      expect(last).toBe(settled);
    }
    expect(settledCount).toBe(40);
  });

  it('holds only an unbroken run of the same decided verdict', () => {
    const hold = new DecisionHold(10);
    const within = { decided: true, verdict: 'within' as const };
    expect(hold.update(100, within)).toBe(false);
    expect(hold.update(124, within)).toBe(false);
    expect(hold.update(125, within)).toBe(true);
    expect(hold.update(126, { decided: false, verdict: 'inconclusive' })).toBe(false);
    expect(hold.update(127, within)).toBe(false);
    expect(hold.decidedSince).toBe(127);
  });
});
