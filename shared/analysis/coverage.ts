import jStat from 'jstat';
import { AnalysisError } from './errors';

/** Coverage factor of an expanded uncertainty and the sentence that says what it covers. */
export interface Coverage {
  /** k = max(floor, t_p(ν)) with ν = ⌊ν_eff⌋. */
  k: number;
  /** ν_eff as given (Infinity when every component has infinite degrees of freedom). */
  effectiveDof: number;
  /** The degrees of freedom used for the t quantile: ⌊ν_eff⌋, at least 1; null for ν_eff = ∞. */
  dofUsed: number | null;
  /** Two-sided coverage probability aimed at (0.95). */
  probability: number;
  /** t_p(ν) itself, before the floor (1.96 at ν = ∞). */
  tQuantile: number;
  /** True when the floor, not the t quantile, set k. */
  floorApplied: boolean;
  /** "k = 2.31 from ν_eff = 8, about 95 % coverage". */
  text: string;
}

/** Driftbench never reports k below 2.00 (see coverageFactor). */
export const COVERAGE_FLOOR = 2;

/**
 * Coverage factor from the effective degrees of freedom (JCGM 100:2008 G.4–G.6): ν_eff is
 * truncated to the next lower integer (G.6.4) and k = t_0.975(ν) from Student's t, so a budget
 * resting on a Type A term with ν of 1–2 gets k = 12.7 or 4.30 rather than 2. Driftbench keeps a
 * floor of k = 2.00 (docs/references.md, "Coverage factor"): for ν_eff ≥ 61 (and ν_eff = ∞,
 * where t = 1.96) it reports the familiar k = 2, which covers at least 95 % — a conservative
 * choice, never a smaller U than the t quantile. Domain: ν_eff > 0 or Infinity; 0 < p < 1.
 */
export function coverageFactor(
  effectiveDof: number,
  probability = 0.95,
  floor = COVERAGE_FLOOR,
): Coverage {
  if (typeof effectiveDof !== 'number' || Number.isNaN(effectiveDof) || !(effectiveDof > 0)) {
    throw new AnalysisError('bad-argument', 'effective degrees of freedom must be > 0');
  }
  if (!(probability > 0 && probability < 1))
    throw new AnalysisError('bad-argument', 'probability must lie in (0, 1)');
  const upper = 1 - (1 - probability) / 2;
  const finite = Number.isFinite(effectiveDof);
  const dofUsed = finite ? Math.max(1, Math.floor(effectiveDof)) : null;
  // jstat's t quantile loses accuracy past ~10⁶ degrees of freedom (0 at 10²⁰); beyond 10⁵ the t
  // and normal quantiles agree to 1e-5, so the normal one is used there.
  const tQuantile =
    dofUsed === null || dofUsed > 1e5
      ? jStat.normal.inv(upper, 0, 1)
      : jStat.studentt.inv(upper, dofUsed);
  const floorApplied = tQuantile < floor;
  const k = floorApplied ? floor : tQuantile;
  const pct = `${Number((probability * 100).toPrecision(3))} %`;
  // Past a thousand the t quantile no longer moves: say "> 1000" rather than print 20 digits.
  const nu = !finite
    ? '= ∞'
    : effectiveDof > 1000
      ? '> 1000'
      : `= ${Number(effectiveDof.toPrecision(3))}`;
  const text = floorApplied
    ? `k = ${k.toFixed(2)} with ν_eff ${nu} (t gives ${tQuantile.toFixed(2)}; Driftbench's floor is ${floor.toFixed(2)}), at least ${pct} coverage`
    : `k = ${k.toFixed(2)} from ν_eff ${nu}, about ${pct} coverage`;
  return { k, effectiveDof, dofUsed, probability, tQuantile, floorApplied, text };
}
