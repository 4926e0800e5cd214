import { AnalysisError, assertNumber } from './errors';

/** One input to a combined standard uncertainty. */
export interface UncertaintyInput {
  /** Standard uncertainty u(x_i). */
  value: number;
  /** Sensitivity coefficient c_i (default 1). */
  sensitivity?: number;
  /** Degrees of freedom ν_i (default ∞, e.g. for type B components). */
  dof?: number;
}

/** Combined standard uncertainty and Welch–Satterthwaite effective degrees of freedom. */
export interface CombinedUncertainty {
  uc: number;
  /** ν_eff; Infinity when every component has infinite dof (serialises as null in JSON). */
  nuEff: number;
}

/**
 * u_c = √Σ(c_i·u_i)² for uncorrelated inputs (GUM JCGM 100:2008 eq 10) and
 * ν_eff = u_c⁴/Σ((c_i·u_i)⁴/ν_i) (GUM G.2b, Welch–Satterthwaite). Domain: u_i ≥ 0, ν_i > 0.
 */
export function combineUncertainty(components: readonly UncertaintyInput[]): CombinedUncertainty {
  if (!Array.isArray(components) || components.length === 0) {
    throw new AnalysisError('empty', 'no uncertainty components');
  }
  let sumSq = 0;
  let sumQuartic = 0;
  components.forEach((c, i) => {
    assertNumber(c.value, `components[${i}].value`);
    if (c.value < 0) throw new AnalysisError('bad-argument', `components[${i}].value is negative`);
    const s = c.sensitivity ?? 1;
    assertNumber(s, `components[${i}].sensitivity`);
    const dof = c.dof ?? Infinity;
    if (typeof dof !== 'number' || Number.isNaN(dof) || !(dof > 0)) {
      throw new AnalysisError('bad-argument', `components[${i}].dof must be > 0`);
    }
    const contribution = s * c.value;
    sumSq += contribution * contribution;
    if (Number.isFinite(dof)) sumQuartic += contribution ** 4 / dof;
  });
  const uc = Math.sqrt(sumSq);
  const nuEff = sumQuartic > 0 ? uc ** 4 / sumQuartic : Infinity;
  return { uc, nuEff };
}
