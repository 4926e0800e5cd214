import { combineGrouped, type GroupedInput } from './correlatedUncertainty';
import { coverageFactor } from './coverage';
import { AnalysisError, assertNumber } from './errors';
import { temperatureWarning } from './temperature';
import type { BudgetComponent, Distribution } from './uncertaintyBudget';
import { guardBandVerdictInterval, type Verdict } from './verdict';

/** A budget line of one side, as uncertaintyBudget gives it (value and contribution in the quantity unit). */
export type CompareSideLine = Pick<
  BudgetComponent,
  'name' | 'value' | 'contribution' | 'dof' | 'type' | 'distribution'
> &
  Partial<Pick<BudgetComponent, 'symbol' | 'unit' | 'sensitivity' | 'note' | 'source' | 'key'>>;

/** One side of a before/after comparison. */
export interface CompareSide {
  /** Measured value in the quantity unit (Hz, mg, …). */
  mean: number;
  /** Combined standard uncertainty in the quantity unit. */
  u: number;
  /** The part of u due to the reference (timebase), in the quantity unit. */
  uReference?: number;
  /** The side's budget lines; when given, Δ's budget lists them (and ν_eff uses their ν). */
  components?: readonly CompareSideLine[];
  nominal?: number;
  unit?: string;
  ambientC?: number;
}

/** A line of Δ's budget that belongs to neither side alone (a shared input, a change between captures). */
export interface DeltaTerm {
  name: string;
  symbol?: string;
  /** Standard uncertainty of the input, in `unit`. */
  value: number;
  unit: string;
  /** ∂Δ/∂x in the quantity unit per unit of the input. */
  sensitivity: number;
  distribution: Distribution;
  type?: 'A' | 'B';
  dof?: number;
  note: string;
  source?: string;
}

/** Units a limit may be stated in; ppm, ppb and % are relative to the nominal. */
export const LIMIT_UNITS = ['ppm', 'ppb', 'Hz', 'mg', '%'] as const;
export type LimitUnit = (typeof LIMIT_UNITS)[number];

export interface CompareOptions {
  /** Half-width of a symmetric allowed change, L > 0 (used when limitLow/limitHigh are absent). */
  limit?: number;
  /** Lower bound of the allowed change (may be negative), null/absent for none. */
  limitLow?: number | null;
  /** Upper bound of the allowed change, null/absent for none. */
  limitHigh?: number | null;
  limitUnit: LimitUnit;
  nominal?: number;
  /** Both captures used the same reference: its offset is one input used twice (r = 1). */
  sameReference?: boolean;
  /** Coverage factor; default k = max(2, t_0.975(ν_eff)) over all lines of Δ (coverageFactor). */
  confidenceK?: number;
  /** Ambient change above which a warning note is added (°C, default 1). */
  maxAmbientDeltaC?: number;
  /** Lines of Δ's budget beyond the two sides' own (tuning-fork parameters, reference ageing). */
  deltaTerms?: readonly DeltaTerm[];
  /** Side lines with these keys are left out (replaced by deltaTerms, e.g. 'temperature'). */
  replaceKeys?: readonly string[];
}

/** The budget of Δ, in the same shape as a capture's budget. */
export interface DeltaBudget {
  mean: number;
  components: BudgetComponent[];
  combined: number;
  effectiveDof: number;
  k: number;
  coverage: string;
  expanded: number;
  relativeExpanded: number | null;
  notes: string[];
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
  /** ν_eff of Δ over every line of both sides and the shared terms (Welch–Satterthwaite). */
  effectiveDof: number;
  coverage: string;
  limit: {
    quantity: number | null;
    quantityUnit: string;
    given: number | null;
    givenUnit: LimitUnit;
    low: number | null;
    high: number | null;
    givenLow: number | null;
    givenHigh: number | null;
  };
  verdict: Verdict;
  /** |Δ| > U: the change is larger than its expanded uncertainty. */
  significant: boolean;
  referenceCorrelated: boolean;
  budget: DeltaBudget;
  notes: string[];
}

const RELATIVE: Partial<Record<LimitUnit, number>> = { ppm: 1e-6, ppb: 1e-9, '%': 1e-2 };

interface Line extends GroupedInput {
  component: BudgetComponent;
}

/**
 * Before/after comparison: Δ = after − before with its own budget. Each side's lines enter with
 * sensitivity ∓1; a reference shared by both captures is one input used twice, so its two lines
 * combine with r = 1 (JCGM 100:2008 §5.2 eq. 16) and cancel to |u_a − u_b|; shared inputs and
 * changes between captures come in as deltaTerms with their sensitivities. u(Δ) by eq. 10 over
 * the independent terms, ν_eff by Welch–Satterthwaite (G.2b) over all of them,
 * k = max(2, t_0.975(ν_eff)) (G.4–G.6), U = k·u. Verdict by the guard band w = U on each side of
 * a symmetric, asymmetric or one-sided limit (ILAC-G8:09/2019, guardBandVerdictInterval).
 * Domain: finite means, u ≥ 0, a limit (L > 0, or bounds with low < high); a nominal > 0 when
 * the limit is relative (ppm, ppb, %).
 */
export function compare(before: CompareSide, after: CompareSide, opts: CompareOptions): Comparison {
  for (const [name, side] of [
    ['before', before],
    ['after', after],
  ] as const) {
    assertNumber(side?.mean, `${name}.mean`);
    assertNumber(side.u, `${name}.u`);
    if (side.u < 0) throw new AnalysisError('bad-argument', `${name}.u is negative`);
  }
  if (before.unit && after.unit && before.unit !== after.unit) {
    throw new AnalysisError('mismatched', `units differ: ${before.unit} vs ${after.unit}`);
  }
  const nominal = opts.nominal ?? before.nominal ?? after.nominal;
  if (
    before.nominal !== undefined &&
    after.nominal !== undefined &&
    before.nominal !== after.nominal
  ) {
    throw new AnalysisError('mismatched', 'before and after have different nominals');
  }
  const unit = before.unit ?? after.unit ?? (opts.limitUnit === 'mg' ? 'mg' : 'Hz');
  const limit = limitsInQuantity(opts, nominal, before.unit);

  const notes: string[] = [];
  const lines: Line[] = [];
  let referenceCorrelated = false;
  const shared = opts.sameReference === true;
  const replace = new Set(opts.replaceKeys ?? []);
  for (const [side, sign, label] of [
    [before, -1, 'Before'],
    [after, 1, 'After'],
  ] as const) {
    if (side.components && side.components.length > 0) {
      for (const c of side.components) {
        if (c.key && replace.has(c.key)) continue;
        const group = shared && c.key === 'reference-offset' ? 'reference-offset' : undefined;
        if (group) referenceCorrelated = true;
        lines.push(line(`${label}: ${c.name}`, c, sign, group));
      }
    } else {
      // A side known only by its combined u: the reference part (if any) split off.
      const uRef = side.uReference ?? 0;
      const rest =
        shared && side.uReference !== undefined
          ? Math.sqrt(Math.max(0, side.u ** 2 - uRef ** 2))
          : side.u;
      lines.push(
        line(
          `${label}: combined`,
          {
            name: 'combined',
            value: rest,
            contribution: rest,
            dof: Infinity,
            type: 'B',
            distribution: 'normal',
          },
          sign,
        ),
      );
      if (shared && side.uReference !== undefined) {
        referenceCorrelated = true;
        lines.push(
          line(
            `${label}: reference`,
            {
              name: 'reference',
              value: uRef,
              contribution: uRef,
              dof: Infinity,
              type: 'B',
              distribution: 'normal',
              key: 'reference-offset',
            },
            sign,
            'reference-offset',
          ),
        );
      }
    }
  }
  if (shared) {
    notes.push(
      referenceCorrelated
        ? 'Same reference for both captures: its offset is one input used twice (r = 1), so its two lines cancel in Δ (JCGM 100 eq. 16).'
        : 'Same reference, but no reference component was given: nothing removed.',
    );
  }
  for (const t of opts.deltaTerms ?? []) {
    assertNumber(t.value, `${t.name}: value`);
    assertNumber(t.sensitivity, `${t.name}: sensitivity`);
    const contribution = t.sensitivity * t.value;
    lines.push({
      signedContribution: contribution,
      dof: t.dof ?? Infinity,
      component: {
        name: t.name,
        symbol: t.symbol,
        value: t.value,
        unit: t.unit,
        distribution: t.distribution,
        sensitivity: t.sensitivity,
        contribution: Math.abs(contribution),
        dof: t.dof ?? Infinity,
        type: t.type ?? 'B',
        note: t.note,
        ...(t.source ? { source: t.source } : {}),
      },
    });
  }

  const { uc: u, nuEff } = combineGrouped(lines);
  const coverage = opts.confidenceK !== undefined ? null : coverageFactor(nuEff);
  const k = opts.confidenceK ?? coverage!.k;
  assertNumber(k, 'confidenceK', true);
  const coverageText = coverage?.text ?? `k = ${k} (given)`;
  const expandedUncertainty = k * u;
  const delta = after.mean - before.mean;
  const verdict = guardBandVerdictInterval(delta, expandedUncertainty, {
    low: limit.low,
    high: limit.high,
  });
  if (verdict === 'inconclusive') {
    notes.push(
      'Inconclusive: a limit lies within Δ ± U; more averaging or a better reference narrows U.',
    );
  }
  if (before.ambientC !== undefined && after.ambientC !== undefined) {
    const warning = temperatureWarning(before.ambientC, after.ambientC, opts.maxAmbientDeltaC ?? 1);
    if (warning) notes.push(warning);
  }
  const components = displayLines(lines);
  const result: Comparison = {
    delta,
    u,
    expandedUncertainty,
    k,
    effectiveDof: nuEff,
    coverage: coverageText,
    limit: { ...limit, quantityUnit: unit },
    verdict,
    significant: Math.abs(delta) > expandedUncertainty,
    referenceCorrelated,
    budget: {
      mean: delta,
      components,
      combined: u,
      effectiveDof: nuEff,
      k,
      coverage: coverageText,
      expanded: expandedUncertainty,
      relativeExpanded:
        nominal !== undefined && nominal > 0 && unit === 'Hz'
          ? expandedUncertainty / nominal
          : null,
      notes: [],
    },
    notes,
  };
  if (nominal !== undefined && nominal > 0 && unit === 'Hz') {
    result.deltaPpm = (delta / nominal) * 1e6;
    result.deltaPpb = (delta / nominal) * 1e9;
  }
  return result;
}

function line(name: string, c: CompareSideLine, sign: 1 | -1, group?: string): Line {
  return {
    signedContribution: sign * c.contribution,
    dof: c.dof === null || c.dof === undefined ? Infinity : c.dof,
    group,
    component: {
      name,
      symbol: c.symbol,
      value: c.value,
      unit: c.unit ?? 'Hz',
      distribution: c.distribution,
      sensitivity: sign * (c.sensitivity ?? 1),
      contribution: c.contribution,
      dof: c.dof === null || c.dof === undefined ? Infinity : c.dof,
      type: c.type,
      note: c.note ?? '',
      ...(c.source ? { source: c.source } : {}),
      ...(c.key ? { key: c.key } : {}),
    },
  };
}

/** Independent lines as they are; a correlated group as one line whose contribution is the signed sum. */
function displayLines(lines: Line[]): BudgetComponent[] {
  const out: BudgetComponent[] = [];
  const groups = new Map<string, Line[]>();
  for (const l of lines) {
    if (!l.group) {
      out.push(l.component);
      continue;
    }
    const g = groups.get(l.group);
    if (g) g.push(l);
    else {
      const list = [l];
      groups.set(l.group, list);
      out.push({ ...l.component, name: '', note: '' }); // placeholder filled below
    }
  }
  for (const [key, list] of groups) {
    const idx = out.findIndex((c) => c.name === '' && c.key === key);
    const sum = list.reduce((s, l) => s + l.signedContribution, 0);
    const parts = list.map((l) => l.component.contribution.toExponential(2)).join(' and ');
    out[idx] = {
      ...list[0].component,
      name: 'Reference offset (shared, r = 1)',
      sensitivity: 1,
      value: Math.abs(sum),
      contribution: Math.abs(sum),
      dof: Math.min(...list.map((l) => l.dof)),
      note: `One reference in both captures: its lines (${parts} Hz) enter with opposite signs and cancel to the difference.`,
      source: 'JCGM 100:2008 §5.2 eq. 16',
    };
  }
  return out;
}

function limitsInQuantity(
  opts: CompareOptions,
  nominal: number | undefined,
  valuesUnit: string | undefined,
) {
  const asymmetric =
    (opts.limitLow !== undefined && opts.limitLow !== null) ||
    (opts.limitHigh !== undefined && opts.limitHigh !== null);
  const givenLow = asymmetric ? (opts.limitLow ?? null) : null;
  const givenHigh = asymmetric ? (opts.limitHigh ?? null) : null;
  let given: number | null = null;
  if (asymmetric) {
    if (givenLow !== null) assertNumber(givenLow, 'limitLow');
    if (givenHigh !== null) assertNumber(givenHigh, 'limitHigh');
    if (givenLow !== null && givenHigh !== null && !(givenLow < givenHigh)) {
      throw new AnalysisError('bad-argument', 'limitLow must lie below limitHigh');
    }
  } else {
    assertNumber(opts.limit, 'limit', true);
    given = opts.limit;
  }
  const rel = RELATIVE[opts.limitUnit];
  let scale = 1;
  if (rel !== undefined) {
    if (nominal === undefined)
      throw new AnalysisError('bad-argument', `a limit in ${opts.limitUnit} needs a nominal value`);
    assertNumber(nominal, 'nominal', true);
    scale = rel * nominal;
  } else if (valuesUnit && valuesUnit !== opts.limitUnit) {
    throw new AnalysisError('mismatched', `limit in ${opts.limitUnit} but values in ${valuesUnit}`);
  }
  const low = asymmetric ? (givenLow === null ? null : givenLow * scale) : -given! * scale;
  const high = asymmetric ? (givenHigh === null ? null : givenHigh * scale) : given! * scale;
  return {
    quantity: given === null ? null : given * scale,
    given,
    givenUnit: opts.limitUnit,
    low,
    high,
    givenLow: asymmetric ? givenLow : given === null ? null : -given,
    givenHigh: asymmetric ? givenHigh : given,
  };
}
