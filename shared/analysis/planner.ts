/**
 * How long to capture: Driftbench's own planner (issue 12).
 *
 * Model, in one sentence (shown on screen as PLANNER_MODEL): the mean of a capture of length T
 * scatters like the stability curve at τ = T, which falls as white frequency noise averages down
 * (σ² ∝ 1/τ) until it meets the flicker floor, where more time no longer helps.
 *
 * From a measured curve σ(τ) we fit σ²(τ) = a/τ + b² (a ≥ 0: white FM, b ≥ 0: the floor) by
 * least squares on σ² (each point weighted by edf/σ⁴, the inverse of var(σ̂²) ≈ 2σ⁴/edf, so a
 * long-τ point resting on few differences counts little).
 * The standard uncertainty of a capture's mean over T is then σ(T) (the Allan variance at τ = T
 * is half the mean squared difference of successive T-averages: docs/planner.md gives the model,
 * its assumptions and its sources in our words);
 * Δ = after − before adds the baseline's variance (its own measured u, or the same model at the
 * same length when no baseline exists yet) and the inputs that do not average (resolution,
 * reference, temperature) in quadrature, and U = k·u (k = 2 by default, as in the budget).
 * The guard-banded verdict (ILAC-G8, w = U) decides once U ≤ | L − |Δ| |, so the shortest
 * capture that decides is the T where U(T) reaches that margin; solved in closed form.
 */
import { AnalysisError } from './errors';
import { coverageFactor } from './coverage';
import type { Verdict } from './verdict';

export const PLANNER_MODEL =
  'The mean of a capture of length T scatters like the stability curve at τ = T: white frequency noise averages down as 1/√T until the flicker floor measured on the curve, where longer captures stop helping.';

export interface CurvePoint {
  tau: number;
  dev: number;
  /** Equivalent degrees of freedom of the point, when known: the fit trusts it in proportion. */
  edf?: number;
}

export interface NoiseModel {
  /** White-FM coefficient: σ²(τ) = a/τ + b². */
  a: number;
  /** The flicker floor b (same unit as the curve). */
  floor: number;
  /** Where the model came from. */
  source: 'measured' | 'typical';
}

/** σ(τ) of the model. */
export function modelDev(m: NoiseModel, tau: number): number {
  return Math.sqrt(m.a / tau + m.floor * m.floor);
}

/**
 * Fits σ²(τ) = a/τ + b² (a, b ≥ 0) to a stability curve, each point weighted by edf/σ⁴ (edf 1
 * when unknown). Needs at least two points with τ > 0 and σ > 0. When the unconstrained fit gives a negative term, that term is set to zero and the
 * other refitted alone.
 */
export function fitNoiseModel(
  points: readonly CurvePoint[],
  source: NoiseModel['source'] = 'measured',
): NoiseModel {
  const pts = points.filter(
    (p) => p.tau > 0 && p.dev > 0 && Number.isFinite(p.tau) && Number.isFinite(p.dev),
  );
  if (pts.length < 2)
    throw new AnalysisError(
      'too-short',
      'the stability curve needs at least two points to plan from',
    );
  // Weighted linear least squares of s = σ² on x = 1/τ, weights w = edf/σ⁴.
  let sw = 0;
  let swx = 0;
  let sws = 0;
  let swxx = 0;
  let swxs = 0;
  for (const p of pts) {
    const s = p.dev * p.dev;
    const x = 1 / p.tau;
    const w = (p.edf && p.edf > 0 && Number.isFinite(p.edf) ? p.edf : 1) / (s * s);
    sw += w;
    swx += w * x;
    sws += w * s;
    swxx += w * x * x;
    swxs += w * x * s;
  }
  const det = sw * swxx - swx * swx;
  let a = det !== 0 ? (sw * swxs - swx * sws) / det : 0;
  let c = det !== 0 ? (swxx * sws - swx * swxs) / det : sws / sw;
  if (a < 0 || det === 0) {
    a = 0;
    c = sws / sw; // the floor alone
  } else if (c < 0) {
    c = 0;
    a = swxs / swxx; // white FM alone
  }
  return { a, floor: Math.sqrt(c), source };
}

/**
 * Typical curves per part kind, used before a DUT has a baseline: σ_y at 1 s (white FM) and the
 * flicker floor, fractional (frequency parts) or in g (accelerometers). Driftbench's own
 * assumptions for bench parts in a quiet lab — common practice, no source; a measured baseline
 * replaces them as soon as one exists.
 */
export const TYPICAL_CURVES: Record<string, { at1s: number; floor: number }> = {
  crystal: { at1s: 1e-9, floor: 5e-11 },
  oscillator: { at1s: 5e-10, floor: 2e-11 },
  tcxo: { at1s: 1e-9, floor: 1e-10 },
  'tuning-fork': { at1s: 2e-8, floor: 2e-9 },
  accelerometer: { at1s: 1e-4, floor: 1e-5 },
  other: { at1s: 1e-8, floor: 1e-9 },
};

/** The typical model of a part kind (white FM with σ(1 s) = at1s, then the floor). */
export function typicalModel(kind: string): NoiseModel {
  const t = TYPICAL_CURVES[kind] ?? TYPICAL_CURVES.other;
  return { a: Math.max(0, t.at1s * t.at1s - t.floor * t.floor), floor: t.floor, source: 'typical' };
}

export interface PlanInput {
  model: NoiseModel;
  /** Allowed change L (> 0), in the curve's unit (fractional for frequency). */
  limit: number;
  /** The shift to decide on, |Δ| expected, in the same unit. */
  shift: number;
  /** Standard uncertainty of the baseline's mean when it exists; otherwise the baseline is planned at the same length. */
  baselineU?: number;
  /** Standard uncertainty of the inputs that do not average (resolution, reference, temperature), combined. */
  fixedU?: number;
  /** Coverage factor (default 2). */
  k?: number;
  /** Seconds per reading (gate + dead time): the shortest capture is two readings. */
  tau0: number;
}

export interface PlanPoint {
  /** Capture length, s. */
  length: number;
  /** Expanded uncertainty of Δ at that length. */
  U: number;
}

export interface Plan {
  /** U of Δ against capture length, on a log grid from 2·τ0 to 10⁶ s. */
  curve: PlanPoint[];
  /** U of Δ for an endless capture (the floor and the fixed inputs). */
  Ufloor: number;
  /** |L − shift|: how small U must become for the verdict to be decided. */
  margin: number;
  /** The verdict a long enough capture would give for this shift ('within' or 'exceeds'). */
  verdict: 'within' | 'exceeds' | 'undecidable';
  /** Shortest capture (s) that decides, or null when no length does (margin ≤ Ufloor). */
  shortest: number | null;
  k: number;
}

/** Expanded uncertainty of Δ for a capture of length T under the plan's inputs. */
export function plannedU(input: Omit<PlanInput, 'limit' | 'shift'>, length: number): number {
  const k = input.k ?? 2;
  const after = modelDev(input.model, length) ** 2;
  const before = input.baselineU !== undefined ? input.baselineU ** 2 : after;
  return k * Math.sqrt(after + before + (input.fixedU ?? 0) ** 2);
}

/** Predicts U of Δ against capture length and the shortest capture that decides for a shift. */
export function planCapture(input: PlanInput): Plan {
  const { model, limit, shift, tau0 } = input;
  if (!(limit > 0))
    throw new AnalysisError(
      'bad-argument',
      'the limit must be greater than zero to plan a capture',
    );
  if (!(shift >= 0)) throw new AnalysisError('bad-argument', 'the shift must be zero or more');
  if (!(tau0 > 0)) throw new AnalysisError('bad-argument', 'τ0 must be greater than zero');
  const k = input.k ?? 2;
  const fixed = (input.fixedU ?? 0) ** 2;
  const floor2 = model.floor * model.floor;
  const baselineFixed = input.baselineU !== undefined;
  const C = floor2 + (baselineFixed ? input.baselineU! ** 2 : floor2) + fixed;
  const m = baselineFixed ? 1 : 2;
  const Ufloor = k * Math.sqrt(C);
  const margin = Math.abs(limit - shift);
  const verdict =
    shift === limit || margin <= Ufloor ? 'undecidable' : shift < limit ? 'within' : 'exceeds';
  let shortest: number | null = null;
  if (verdict !== 'undecidable') {
    // U(T)² = k²(m·a/T + C) ≤ margin²  ⇔  T ≥ k²·m·a / (margin² − k²·C). Exceeds needs U < margin strictly: same T in practice.
    const T = model.a > 0 ? (k * k * m * model.a) / (margin * margin - k * k * C) : 0;
    shortest = Math.max(2 * tau0, T);
  }
  const curve: PlanPoint[] = [];
  const lo = Math.log10(2 * tau0);
  const hi = 6;
  for (let i = 0; i <= 60; i++) {
    const length = 10 ** (lo + ((hi - lo) * i) / 60);
    curve.push({ length, U: plannedU(input, length) });
  }
  return { curve, Ufloor, margin, verdict, shortest, k };
}

export interface LiveDecisionInput {
  /** Running mean and standard deviation of the readings so far, and their number. */
  mean: number;
  sd: number;
  n: number;
  /** The baseline's mean and its standard uncertainty (same unit as mean). */
  baselineMean: number;
  baselineU: number;
  /** Allowed change L, in the mean's unit. */
  limit: number;
  /** The flicker floor of the DUT's model, in the mean's unit (0 when unknown). */
  floor?: number;
  /** Inputs that do not average, combined standard uncertainty, in the mean's unit. */
  fixedU?: number;
  /**
   * Lines of Δ's budget that belong to neither side alone (tuning-fork T0/B, reference change
   * between the captures, a default timebase), standard uncertainties in the mean's unit.
   */
  deltaTerms?: ReadonlyArray<{ u: number; dof?: number }>;
  /**
   * True only when baselineU, fixedU and deltaTerms hold every term the final comparison will
   * have. Otherwise a "within" is a hint, never decided (the comparison could say otherwise).
   */
  complete?: boolean;
  /** A given coverage factor; by default k = coverageFactor(ν_eff) (JCGM 100 G.4–G.6). */
  k?: number;
}

export interface LiveDecision {
  delta: number;
  /** Running U of the mean (after side alone), and of Δ. */
  Umean: number;
  U: number;
  /** L − |Δ|: positive inside the limit. */
  margin: number;
  verdict: Verdict;
  /** True once more readings of the same behaviour cannot change the verdict. */
  decided: boolean;
}

/**
 * The bench's live "decidable" figure: running U of the mean (white-FM standard error sd/√n with
 * the floor added in quadrature, the baseline's u, the fixed terms and Δ's own terms), k from
 * coverageFactor(ν_eff) with ν = n − 1 for the running mean, and the guard-banded verdict on Δ.
 * Decided when |Δ| − U > L (exceeds), or |Δ| + U ≤ L (within) only when `complete` says every
 * term of the final comparison is in: U only shrinks as readings come in, so the verdict then
 * stays as it is while the DUT behaves the same.
 */
export function liveDecision(input: LiveDecisionInput): LiveDecision {
  const delta = input.mean - input.baselineMean;
  if (input.n < 2)
    return {
      delta,
      Umean: Infinity,
      U: Infinity,
      margin: input.limit - Math.abs(delta),
      verdict: 'inconclusive',
      decided: false,
    };
  const sem2 = (input.sd * input.sd) / input.n;
  const uMean = Math.sqrt(sem2 + (input.floor ?? 0) ** 2);
  const extra = input.deltaTerms ?? [];
  const u2 =
    uMean * uMean +
    input.baselineU * input.baselineU +
    (input.fixedU ?? 0) ** 2 +
    extra.reduce((s, t) => s + t.u * t.u, 0);
  const u = Math.sqrt(u2);
  // Welch–Satterthwaite (JCGM 100 G.2b): the running SEM has ν = n − 1, the rest as given (∞).
  const den =
    (sem2 * sem2) / (input.n - 1) +
    extra.reduce(
      (s, t) => s + (t.dof !== undefined && Number.isFinite(t.dof) ? t.u ** 4 / t.dof : 0),
      0,
    );
  // (the 1e-9 keeps ν = n − 1 from rounding down to n − 2 through floating point)
  const nuEff = den > 0 ? ((u2 * u2) / den) * (1 + 1e-9) : Infinity;
  const k = input.k ?? coverageFactor(nuEff > 0 ? nuEff : 1).k;
  const U = k * u;
  const abs = Math.abs(delta);
  const verdict =
    abs + U <= input.limit ? 'within' : abs - U > input.limit ? 'exceeds' : 'inconclusive';
  // A "within" on a budget that lacks terms of the final comparison is only a hint (review8 F6):
  // the comparison may widen U and say "inconclusive"; it must never be shown as decided.
  const decided = verdict === 'exceeds' || (verdict === 'within' && input.complete === true);
  return { delta, Umean: k * uMean, U, margin: input.limit - abs, verdict, decided };
}

/**
 * When the bench may stop by itself: the live verdict has been decided, the same way, without a
 * break over the last readings — at least a quarter more readings than when it was first decided
 * and at least `minHold` of them. The first moment U meets the margin is the least certain one
 * (the running mean still wanders by about U/2), so stopping there would let chance decide;
 * Driftbench's own rule, no source.
 */
export class DecisionHold {
  private since = -1;
  private verdict: LiveDecision['verdict'] | null = null;
  constructor(private readonly minHold = 10) {}

  /** Feeds the decision at `n` readings; true once the verdict is settled. */
  update(n: number, d: Pick<LiveDecision, 'decided' | 'verdict'>): boolean {
    if (!d.decided) {
      this.since = -1;
      this.verdict = null;
      return false;
    }
    if (this.since < 0 || this.verdict !== d.verdict) {
      this.since = n;
      this.verdict = d.verdict;
    }
    return n >= Math.max(Math.ceil(this.since * 1.25), this.since + this.minHold);
  }

  /** Readings at which the current run of decided verdicts began (−1 when undecided). */
  get decidedSince(): number {
    return this.since;
  }
}
