import { AnalysisError, assertNumber } from './errors';

export interface TuningForkOptions {
  /** Parabolic coefficient in ppm/°C² (default −0.034, typical datasheet value). */
  B?: number;
  /** Turnover temperature in °C (default 25). */
  T0?: number;
}

/**
 * Frequency shift of a tuning-fork (32.768 kHz) crystal in ppm, Δf/f = B·(T − T0)² (makers'
 * datasheets, B ≈ −0.034 ppm/°C², T0 = 25 °C; docs/references.md "Crystals and temperature").
 */
export function tuningForkShift(T: number, opts: TuningForkOptions = {}): number {
  const B = opts.B ?? -0.034;
  const T0 = opts.T0 ?? 25;
  assertNumber(T, 'T');
  assertNumber(B, 'B');
  assertNumber(T0, 'T0');
  return B * (T - T0) ** 2;
}

/**
 * A tuning-fork crystal's frequency measured at T brought to its turnover T0:
 * f(T0) = f(T)/(1 + shift·1e-6), shift from tuningForkShift (same source). Domain: finite f, T.
 */
export function normalizeTuningFork(f: number, T: number, opts: TuningForkOptions = {}): number {
  assertNumber(f, 'f');
  return f / (1 + tuningForkShift(T, opts) * 1e-6);
}

/**
 * A warning when ambient temperature changed by more than maxDelta °C between captures (default
 * 1 °C; common practice, no source: AT-cut crystals are warned about, not corrected), else null.
 */
export function temperatureWarning(tBefore: number, tAfter: number, maxDelta = 1): string | null {
  assertNumber(tBefore, 'tBefore');
  assertNumber(tAfter, 'tAfter');
  assertNumber(maxDelta, 'maxDelta');
  const d = tAfter - tBefore;
  if (Math.abs(d) <= maxDelta) return null;
  const sign = d > 0 ? '+' : '−';
  return (
    `Ambient temperature changed by ${sign}${Math.abs(d).toFixed(1)} °C between captures ` +
    `(more than ${maxDelta} °C): part of Δ may be temperature, not the process.`
  );
}

/** A tuning fork's parabola with the standard uncertainties of its parameters. */
export interface TuningForkParameters {
  /** Parabolic coefficient, ppm/°C². */
  B: number;
  /** Standard uncertainty of B, ppm/°C². */
  uB: number;
  /** Turnover temperature, °C. */
  T0: number;
  /** Standard uncertainty of T0, °C. */
  uT0: number;
}

/** What is known of the bench thermometer and of the lab when a side has no ambient recorded. */
export interface ThermometerModel {
  /** Standard uncertainty of one ambient reading (resolution, gradients), independent per capture, °C. */
  uReading: number;
  /** Standard uncertainty of the thermometer's calibration bias, common to both captures, °C. */
  uBias: number;
  /** The lab's ambient range [low, high] °C, taken as rectangular when a capture has no ambient. */
  labRange: readonly [number, number];
}

/** One input of the tuning-fork part of Δ's budget; sensitivities and contributions in ppm. */
export interface TuningForkTerm {
  name: string;
  symbol: string;
  /** Standard uncertainty of the input, in `unit`. */
  value: number;
  unit: string;
  /** ∂Δ/∂x in ppm per unit of the input (effective for a not-recorded ambient, see note). */
  sensitivityPpm: number;
  /** Signed c·u in ppm. */
  contributionPpm: number;
  distribution: 'normal' | 'rectangular';
  note: string;
  source: string;
}

export interface TuningForkDelta {
  /** Expected shift B·E[(T − T0)²] of each side in ppm, used to bring each mean to T0. */
  shiftBeforePpm: number;
  shiftAfterPpm: number;
  /** The ambient each side is evaluated at (the lab range's middle when not recorded). */
  ambientBefore: number;
  ambientAfter: number;
  terms: TuningForkTerm[];
  notes: string[];
}

/**
 * The tuning-fork normalisation of a before/after change and its uncertainty. Each mean is taken
 * to the turnover with s(T) = B·(T − T0)² (docs/references.md, "Tuning-fork crystals"), so
 * Δ = (y_a − s(T_a)) − (y_b − s(T_b)) in ppm. T0, B and the thermometer's bias are the same
 * quantities in both terms, so they enter once with the combined sensitivity (JCGM 100:2008 §5.2,
 * eq. 16 with r = 1): ∂Δ/∂T0 = 2B(T_a − T_b), ∂Δ/∂B = −[(T_a − T0)² − (T_b − T0)²],
 * ∂Δ/∂bias = −2B[(T_a − T0) − (T_b − T0)] over the sides that were measured; each reading's
 * own uncertainty is independent with ∂Δ/∂T_a = −2B(T_a − T0), ∂Δ/∂T_b = +2B(T_b − T0).
 * A side with no ambient recorded is taken as rectangular over the lab range (never as 25 °C):
 * its expected shift is B·[(T̂ − T0)² + u²] and its standard deviation
 * |B|·√(4(T̂ − T0)²u² + 0.8u⁴), exact for a rectangular T (the 0.8u⁴ is the parabola's
 * second-order term, JCGM 100 §5.1.2 note, with the rectangular fourth moment 9u⁴/5).
 * Domain: finite parameters, u ≥ 0, labRange low < high.
 */
export function tuningForkDelta(
  ambientBefore: number | null,
  ambientAfter: number | null,
  fork: TuningForkParameters,
  thermometer: ThermometerModel,
): TuningForkDelta {
  const { B, uB, T0, uT0 } = fork;
  for (const [v, n] of [
    [B, 'B'],
    [uB, 'u(B)'],
    [T0, 'T0'],
    [uT0, 'u(T0)'],
    [thermometer.uReading, 'u(reading)'],
    [thermometer.uBias, 'u(bias)'],
  ] as const) {
    assertNumber(v, n);
  }
  const [lo, hi] = thermometer.labRange;
  assertNumber(lo, 'labRange low');
  assertNumber(hi, 'labRange high');
  if (!(lo < hi))
    throw new AnalysisError('bad-argument', 'the lab range must run from low to high');
  const mid = (lo + hi) / 2;
  const uLab = (hi - lo) / (2 * Math.sqrt(3));
  const side = (T: number | null) => {
    if (T !== null) assertNumber(T, 'ambient');
    const known = T !== null;
    const est = T ?? mid;
    const d = est - T0;
    const d2 = known ? d * d : d * d + uLab * uLab;
    return { known, est, d, d2, shift: B * d2 };
  };
  const b = side(ambientBefore);
  const a = side(ambientAfter);
  const terms: TuningForkTerm[] = [];
  const notes: string[] = [];
  const source = 'JCGM 100:2008 §5.2 eq. 16 (shared input, r = 1)';
  const push = (t: Omit<TuningForkTerm, 'contributionPpm'>) =>
    terms.push({ ...t, contributionPpm: t.sensitivityPpm * t.value });

  push({
    name: 'Turnover temperature T0 (shared)',
    symbol: 'u_T0',
    value: uT0,
    unit: '°C',
    sensitivityPpm: 2 * B * (a.est - b.est),
    distribution: 'rectangular',
    note: `T0 = ${fmt(T0)} °C is the same for both captures: ∂Δ/∂T0 = 2B(T_a − T_b) = ${fmt(2 * B * (a.est - b.est))} ppm/°C.`,
    source,
  });
  push({
    name: 'Parabolic coefficient B (shared)',
    symbol: 'u_B',
    value: uB,
    unit: 'ppm/°C²',
    sensitivityPpm: -(a.d2 - b.d2),
    distribution: 'rectangular',
    note: `B = ${fmt(B)} ppm/°C² is the same for both captures: ∂Δ/∂B = −[(T_a − T0)² − (T_b − T0)²] = ${fmt(-(a.d2 - b.d2))} °C².`,
    source,
  });
  const biasSens = -2 * B * ((a.known ? a.d : 0) - (b.known ? b.d : 0));
  if (a.known || b.known) {
    push({
      name: 'Thermometer bias (shared)',
      symbol: 'u_Tbias',
      value: thermometer.uBias,
      unit: '°C',
      sensitivityPpm: biasSens,
      distribution: 'normal',
      note: 'One thermometer read both ambients: its calibration bias moves both by the same amount and mostly cancels.',
      source,
    });
  }
  for (const [s, which] of [
    [b, 'before'],
    [a, 'after'],
  ] as const) {
    const sign = which === 'after' ? -1 : 1;
    if (s.known) {
      push({
        name: `Ambient reading (${which})`,
        symbol: which === 'after' ? 'u_Ta' : 'u_Tb',
        value: thermometer.uReading,
        unit: '°C',
        sensitivityPpm: sign * 2 * B * s.d,
        distribution: 'normal',
        note: `${fmt(s.est)} °C read once; ∂Δ/∂T = ${which === 'after' ? '−' : '+'}2B(T − T0) = ${fmt(sign * 2 * B * s.d)} ppm/°C.`,
        source: 'JCGM 100:2008 eq. 10',
      });
    } else {
      const sd = Math.abs(B) * Math.sqrt(4 * s.d * s.d * uLab * uLab + 0.8 * uLab ** 4);
      push({
        name: `Ambient not recorded (${which})`,
        symbol: which === 'after' ? 'u_Ta' : 'u_Tb',
        value: uLab,
        unit: '°C',
        sensitivityPpm: uLab > 0 ? (sign * sd) / uLab : 0,
        distribution: 'rectangular',
        note:
          `No ambient was recorded: taken as rectangular over the lab range ${fmt(lo)}–${fmt(hi)} °C (never as 25 °C); ` +
          "the sensitivity includes the parabola's second-order term.",
        source: 'JCGM 100:2008 §4.3.7, §5.1.2',
      });
      notes.push(
        `The ${which} capture has no ambient temperature: it is taken anywhere in the lab range ${fmt(lo)}–${fmt(hi)} °C, which widens U. Record the ambient to narrow it.`,
      );
    }
  }
  // The lines above are first order (plus each unrecorded ambient's own parabola term). The model
  // is a product of its inputs — B·(T − T0)² — so T0 × ambient, B × ambient and B × T0 products add
  // variance that no first-order line carries (JCGM 100 §5.1.2 note: (2B)²·u(T0)²·u(T)² and
  // alike). It is evaluated exactly: Δ is a polynomial of degree ≤ 4 in the inputs, so a 3-point
  // Gauss rule per input (Legendre for rectangular, Hermite for normal; exact to degree 5) gives
  // E[Δ²] and E[Δ] without error. What the first-order lines leave out becomes one line.
  const exactVar = exactVariance(a, b, fork, thermometer, lo, hi);
  const firstOrder = terms.reduce((s, t) => s + t.contributionPpm ** 2, 0);
  const extra = Math.sqrt(Math.max(0, exactVar - firstOrder));
  if (extra > 0) {
    push({
      name: 'Product terms (T0, B × ambients)',
      symbol: 'u_T2',
      value: extra,
      unit: 'ppm',
      sensitivityPpm: 1,
      distribution: 'normal',
      note:
        `Second-order terms of the parabola: T0, B and the ambients multiply in B·(T − T0)², so their uncertainties combine beyond first order ` +
        `(${fmt(extra)} ppm; exact variance of the model over its input distributions, less the first-order lines).`,
      source: 'JCGM 100:2008 §5.1.2 note (higher-order terms)',
    });
  }
  return {
    shiftBeforePpm: b.shift,
    shiftAfterPpm: a.shift,
    ambientBefore: b.est,
    ambientAfter: a.est,
    terms,
    notes,
  };
}

/** 3-point Gauss rules as (offset in standard uncertainties, weight), exact to degree 5. */
const RECT_RULE: ReadonlyArray<readonly [number, number]> = [
  [-Math.sqrt(3 * 0.6), 5 / 18],
  [0, 8 / 18],
  [Math.sqrt(3 * 0.6), 5 / 18],
];
const NORMAL_RULE: ReadonlyArray<readonly [number, number]> = [
  [-Math.sqrt(3), 1 / 6],
  [0, 2 / 3],
  [Math.sqrt(3), 1 / 6],
];

/**
 * Exact variance (ppm²) of Δ_T = −B[(T_a − T0)² − (T_b − T0)²] + (the expected shifts, constants)
 * over independent inputs: B and T0 rectangular with u(B), u(T0); the thermometer bias normal
 * (shared by the recorded sides); each recorded reading normal; an unrecorded ambient rectangular
 * over the lab range. Product Gauss quadrature, exact for this polynomial.
 */
function exactVariance(
  a: { known: boolean; est: number },
  b: { known: boolean; est: number },
  fork: TuningForkParameters,
  th: ThermometerModel,
  lo: number,
  hi: number,
): number {
  const mid = (lo + hi) / 2;
  const uLab = (hi - lo) / (2 * Math.sqrt(3));
  type Axis = ReadonlyArray<readonly [number, number]>;
  const axis = (m: number, u: number, rule: Axis): Axis =>
    u > 0 ? rule.map(([z, w]) => [m + z * u, w] as const) : [[m, 1] as const];
  const Bs = axis(fork.B, fork.uB, RECT_RULE);
  const T0s = axis(fork.T0, fork.uT0, RECT_RULE);
  const bias = axis(0, a.known || b.known ? th.uBias : 0, NORMAL_RULE);
  const side = (s: { known: boolean; est: number }) =>
    s.known ? axis(s.est, th.uReading, NORMAL_RULE) : axis(mid, uLab, RECT_RULE);
  const As = side(a);
  const Bsd = side(b);
  let m1 = 0;
  let m2 = 0;
  for (const [B, wB] of Bs)
    for (const [T0, w0] of T0s)
      for (const [e, we] of bias)
        for (const [Ta, wa] of As)
          for (const [Tb, wb] of Bsd) {
            const ta = Ta + (a.known ? e : 0);
            const tb = Tb + (b.known ? e : 0);
            const d = -B * ((ta - T0) ** 2 - (tb - T0) ** 2);
            const w = wB * w0 * we * wa * wb;
            m1 += w * d;
            m2 += w * d * d;
          }
  return Math.max(0, m2 - m1 * m1);
}

function fmt(v: number): string {
  return Number(v.toPrecision(3)).toString();
}
