import { AnalysisError, assertNumber } from './errors';

/** One input of a model with correlated inputs. */
export interface CorrelatedInput {
  /** Standard uncertainty u(x_i). */
  value: number;
  /** Sensitivity coefficient c_i = ∂f/∂x_i (default 1). */
  sensitivity?: number;
}

/**
 * Combined standard uncertainty with correlated inputs, JCGM 100:2008 §5.2, eq. 16:
 * u_c² = Σ_i Σ_j c_i c_j u(x_i) u(x_j) r(x_i, x_j), with r the correlation matrix (symmetric,
 * unit diagonal, entries in [−1, 1]). Domain: u_i ≥ 0; r square of the inputs' size.
 */
export function combineCorrelated(
  inputs: readonly CorrelatedInput[],
  r: readonly (readonly number[])[],
): number {
  const n = inputs.length;
  if (n === 0) throw new AnalysisError('empty', 'no uncertainty inputs');
  if (
    !Array.isArray(r) ||
    r.length !== n ||
    r.some((row) => !Array.isArray(row) || row.length !== n)
  ) {
    throw new AnalysisError('mismatched', `the correlation matrix must be ${n} × ${n}`);
  }
  const cu = inputs.map((x, i) => {
    assertNumber(x.value, `inputs[${i}].value`);
    if (x.value < 0) throw new AnalysisError('bad-argument', `inputs[${i}].value is negative`);
    const c = x.sensitivity ?? 1;
    assertNumber(c, `inputs[${i}].sensitivity`);
    return c * x.value;
  });
  let sum = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const rij = r[i][j];
      assertNumber(rij, `r[${i}][${j}]`);
      if (rij < -1 || rij > 1)
        throw new AnalysisError('bad-argument', `r[${i}][${j}] lies outside [−1, 1]`);
      if (i === j && rij !== 1)
        throw new AnalysisError('bad-argument', 'the correlation matrix needs a unit diagonal');
      if (Math.abs(rij - r[j][i]) > 1e-12)
        throw new AnalysisError('bad-argument', 'the correlation matrix must be symmetric');
      sum += cu[i] * cu[j] * rij;
    }
  }
  // Rounding can leave a tiny negative sum when fully correlated terms cancel.
  return Math.sqrt(Math.max(0, sum));
}

/** A budget line that may share an input with other lines (same `group` ⇒ r = +1). */
export interface GroupedInput {
  /** Signed contribution c_i·u(x_i) in the output's unit. */
  signedContribution: number;
  /** Degrees of freedom (Infinity for Type B). */
  dof: number;
  /** Lines naming the same group come from one input quantity: fully correlated (r = 1). */
  group?: string;
}

/**
 * u_c and ν_eff of a model whose lines are either independent or come in fully correlated groups
 * (one input used twice, e.g. a shared reference in before and after). Each group is first summed
 * with its signs (JCGM 100 eq. 16 with r = 1, where the lines of one input combine linearly),
 * then the independent effective terms combine by eq. 10 and ν_eff by Welch–Satterthwaite
 * (G.2b), which needs independent terms; a group's ν is the smallest of its lines' (conservative,
 * Driftbench's choice). Domain: finite contributions, ν > 0.
 */
export function combineGrouped(lines: readonly GroupedInput[]): {
  uc: number;
  nuEff: number;
  terms: { group: string | null; contribution: number; dof: number }[];
} {
  if (lines.length === 0) throw new AnalysisError('empty', 'no uncertainty lines');
  const terms: { group: string | null; contribution: number; dof: number }[] = [];
  const byGroup = new Map<string, { group: string; contribution: number; dof: number }>();
  lines.forEach((l, i) => {
    assertNumber(l.signedContribution, `lines[${i}].signedContribution`);
    if (!(l.dof > 0)) throw new AnalysisError('bad-argument', `lines[${i}].dof must be > 0`);
    if (l.group) {
      const g = byGroup.get(l.group);
      if (g) {
        g.contribution += l.signedContribution;
        g.dof = Math.min(g.dof, l.dof);
      } else {
        const t = { group: l.group, contribution: l.signedContribution, dof: l.dof };
        byGroup.set(l.group, t);
        terms.push(t);
      }
    } else {
      terms.push({ group: null, contribution: l.signedContribution, dof: l.dof });
    }
  });
  let sumSq = 0;
  let sumQuartic = 0;
  for (const t of terms) {
    sumSq += t.contribution ** 2;
    if (Number.isFinite(t.dof)) sumQuartic += t.contribution ** 4 / t.dof;
  }
  const uc = Math.sqrt(sumSq);
  return {
    uc,
    nuEff: sumQuartic > 0 ? uc ** 4 / sumQuartic : Infinity,
    terms: terms.map((t) => ({ ...t, contribution: Math.abs(t.contribution) })),
  };
}
