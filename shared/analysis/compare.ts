import { AnalysisError, assertNumber } from './errors';
import { temperatureWarning } from './temperature';
import { guardBandVerdict, type Verdict } from './verdict';

/** One side of a before/after comparison. */
export interface CompareSide {
  /** Measured value in the quantity unit (Hz, mg, …). */
  mean: number;
  /** Combined standard uncertainty in the quantity unit. */
  u: number;
  /** The part of u due to the reference (timebase), in the quantity unit. */
  uReference?: number;
  nominal?: number;
  unit?: string;
  ambientC?: number;
}

/** Units a limit may be stated in; ppm, ppb and % are relative to the nominal. */
export type LimitUnit = 'ppm' | 'ppb' | 'Hz' | 'mg' | '%';

export interface CompareOptions {
  /** Half-width of the allowed change, L > 0. */
  limit: number;
  limitUnit: LimitUnit;
  nominal?: number;
  /** Both captures used the same reference: its offset error cancels in Δ. */
  sameReference?: boolean;
  /** Coverage factor (default 2, GUM §6.3). */
  confidenceK?: number;
  /** Ambient change above which a warning note is added (°C, default 1). */
  maxAmbientDeltaC?: number;
}

export interface Comparison {
  /** after − before in the quantity unit. */
  delta: number;
  deltaPpm?: number;
  deltaPpb?: number;
  /** Standard uncertainty of Δ. */
  u: number;
  expandedUncertainty: number;
  k: number;
  limit: { quantity: number; quantityUnit: string; given: number; givenUnit: LimitUnit };
  verdict: Verdict;
  /** |Δ| > U: the change is larger than its expanded uncertainty. */
  significant: boolean;
  referenceCorrelated: boolean;
  notes: string[];
}

const RELATIVE: Partial<Record<LimitUnit, number>> = { ppm: 1e-6, ppb: 1e-9, '%': 1e-2 };

/**
 * Before/after comparison: Δ = after − before, u(Δ) = √(u_b² + u_a²) for independent captures
 * (GUM eq 10), U = k·u (k = 2, GUM §6.3), verdict by the guard band w = U (ILAC-G8:09/2019, see
 * guardBandVerdict). With a shared reference its component is removed from both in quadrature
 * (fully correlated, it cancels in Δ to first order). Domain: finite means, u ≥ 0, limit > 0;
 * a nominal > 0 when the limit is relative (ppm, ppb, %).
 */
export function compare(before: CompareSide, after: CompareSide, opts: CompareOptions): Comparison {
  for (const [name, side] of [['before', before], ['after', after]] as const) {
    assertNumber(side?.mean, `${name}.mean`);
    assertNumber(side.u, `${name}.u`);
    if (side.u < 0) throw new AnalysisError('bad-argument', `${name}.u is negative`);
  }
  assertNumber(opts.limit, 'limit', true);
  const k = opts.confidenceK ?? 2;
  assertNumber(k, 'confidenceK', true);
  if (before.unit && after.unit && before.unit !== after.unit) {
    throw new AnalysisError('mismatched', `units differ: ${before.unit} vs ${after.unit}`);
  }
  const nominal = opts.nominal ?? before.nominal ?? after.nominal;
  if (before.nominal !== undefined && after.nominal !== undefined && before.nominal !== after.nominal) {
    throw new AnalysisError('mismatched', 'before and after have different nominals');
  }
  const unit = before.unit ?? after.unit ?? (opts.limitUnit === 'mg' ? 'mg' : 'Hz');
  const rel = RELATIVE[opts.limitUnit];
  let limitQuantity: number;
  if (rel !== undefined) {
    if (nominal === undefined) {
      throw new AnalysisError('bad-argument', `a limit in ${opts.limitUnit} needs a nominal value`);
    }
    assertNumber(nominal, 'nominal', true);
    limitQuantity = opts.limit * rel * nominal;
  } else {
    if (before.unit && before.unit !== opts.limitUnit) {
      throw new AnalysisError('mismatched', `limit in ${opts.limitUnit} but values in ${before.unit}`);
    }
    limitQuantity = opts.limit;
  }

  const notes: string[] = [];
  let vb = before.u ** 2;
  let va = after.u ** 2;
  let referenceCorrelated = false;
  if (opts.sameReference) {
    if (before.uReference !== undefined || after.uReference !== undefined) {
      referenceCorrelated = true;
      vb = Math.max(0, vb - (before.uReference ?? 0) ** 2);
      va = Math.max(0, va - (after.uReference ?? 0) ** 2);
      notes.push(
        'Same reference for both captures: its offset uncertainty is common to both and ' +
          'cancels in Δ, so it was removed from each in quadrature.',
      );
    } else {
      notes.push('Same reference, but no reference component was given: nothing removed.');
    }
  }
  const u = Math.sqrt(vb + va);
  const expandedUncertainty = k * u;
  const delta = after.mean - before.mean;
  const verdict = guardBandVerdict(delta, expandedUncertainty, limitQuantity);
  if (verdict === 'inconclusive') {
    notes.push(
      'Inconclusive: the limit lies within Δ ± U; more averaging or a better reference narrows U.',
    );
  }
  if (before.ambientC !== undefined && after.ambientC !== undefined) {
    const warning = temperatureWarning(before.ambientC, after.ambientC, opts.maxAmbientDeltaC ?? 1);
    if (warning) notes.push(warning);
  }
  const result: Comparison = {
    delta,
    u,
    expandedUncertainty,
    k,
    limit: { quantity: limitQuantity, quantityUnit: unit, given: opts.limit, givenUnit: opts.limitUnit },
    verdict,
    significant: Math.abs(delta) > expandedUncertainty,
    referenceCorrelated,
    notes,
  };
  if (nominal !== undefined && nominal > 0 && unit === 'Hz') {
    result.deltaPpm = (delta / nominal) * 1e6;
    result.deltaPpb = (delta / nominal) * 1e9;
  }
  return result;
}
