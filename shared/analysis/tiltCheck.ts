import { combineGrouped } from './correlatedUncertainty';
import { compare, type CompareSideLine, type Comparison } from './compare';
import { coverageFactor } from './coverage';
import { AnalysisError, assertNumber } from './errors';
import { G_N } from './gravity';
import type { BudgetComponent } from './uncertaintyBudget';

/**
 * The accelerometer's own budgets: one static capture (scatter, LSB resolution, orientation) and
 * the guided tilt check (offset and sensitivity of an axis from its flat and inverted captures).
 * The models are GUM's (JCGM 100:2008 §4.2 type A, §4.3.7 rectangular type B, eq. 10, G.2b,
 * G.4–G.6); the tilt geometry (a reading of g·cos θ along gravity, g·sin θ across it) is common
 * practice, no source (docs/references.md, "Accelerometer tilt check").
 */

/** Orientations whose sensing axis lies along gravity (±1 g) or across it (0 g). */
/** The guided tilt check's three poses, in the order the bench takes them. */
export const TILT_POSES = ['flat', 'on-edge', 'inverted'] as const;
export type StaticOrientation = (typeof TILT_POSES)[number];

/** Statistics of one static capture in mg. */
export interface StaticReadings {
  n: number;
  mean: number;
  sd: number;
}

/** The sensor and the set-up: one LSB in mg, how far the board may sit from its ideal pose, local g. */
export interface TiltSetup {
  /** One least-significant digit in mg (e.g. 0.0625 mg at ±2 g and 16 000 digits/g). */
  lsbMg: number;
  /** Largest angle between the board and its ideal pose, degrees (bench flatness, fixture play). */
  orientationErrorDeg: number;
  /** Local gravity in m/s² (default g_n; see wgs84Gravity). */
  localGravity?: number;
}

/** A budget in the shape of a capture's (BudgetTable reads it), for quantities other than frequency. */
export interface PlainBudget {
  mean: number;
  components: BudgetComponent[];
  combined: number;
  effectiveDof: number;
  k: number;
  coverage: string;
  expanded: number;
  relativeExpanded: null;
  notes: string[];
}

const SQRT3 = Math.sqrt(3);

/** One LSB of the bench's accelerometer at its ±2 g span, 0.0625 mg (16 000 digits per g; DEVELOPERS.md, DBX-3). */
export const DEFAULT_ACCEL_LSB_MG = 0.0625;

/** Default orientation error of a board laid on a bench by hand, ±1° (common practice, no source). */
export const DEFAULT_ORIENTATION_ERROR_DEG = 1;

function checkSetup(setup: TiltSetup): number {
  assertNumber(setup.lsbMg, 'lsbMg', true);
  assertNumber(setup.orientationErrorDeg, 'orientationErrorDeg');
  if (setup.orientationErrorDeg < 0 || setup.orientationErrorDeg > 45) {
    throw new AnalysisError('bad-argument', 'orientationErrorDeg must lie within 0…45°');
  }
  const g = setup.localGravity ?? G_N;
  assertNumber(g, 'localGravity', true);
  return (1000 * g) / G_N;
}

function checkReadings(r: StaticReadings, what: string): void {
  assertNumber(r?.n, `${what}.n`);
  assertNumber(r.mean, `${what}.mean`);
  assertNumber(r.sd, `${what}.sd`);
  if (r.n < 2)
    throw new AnalysisError(
      'too-short',
      `${what}: a type A evaluation needs at least two readings`,
    );
  if (r.sd < 0) throw new AnalysisError('bad-argument', `${what}.sd is negative`);
}

/**
 * Half-width in mg of the reading error a misplaced board gives: along gravity the reading is
 * g·cos θ, short of g by 0 … g(1 − cos θ_max), taken as a rectangular of that full width (half-width
 * g(1 − cos θ_max)/2); across gravity it is g·sin θ, ±g·sin θ_max (common practice, no source).
 */
export function orientationHalfWidthMg(
  orientation: StaticOrientation,
  idealMg: number,
  maxDeg: number,
): number {
  const t = (maxDeg * Math.PI) / 180;
  return orientation === 'on-edge' ? idealMg * Math.sin(t) : (idealMg * (1 - Math.cos(t))) / 2;
}

interface LineSpec {
  name: string;
  key: string;
  value: number;
  sensitivity: number;
  dof: number;
  type: 'A' | 'B';
  distribution: 'normal' | 'rectangular';
  unit: string;
  note: string;
  source: string;
}

function toComponent(l: LineSpec): BudgetComponent {
  return { ...l, contribution: Math.abs(l.sensitivity) * l.value };
}

function budgetOf(mean: number, lines: LineSpec[], notes: string[]): PlainBudget {
  const components = lines.map(toComponent);
  const { uc, nuEff } = combineGrouped(
    lines.map((l) => ({ signedContribution: l.sensitivity * l.value, dof: l.dof })),
  );
  const cov = coverageFactor(nuEff);
  return {
    mean,
    components,
    combined: uc,
    effectiveDof: nuEff,
    k: cov.k,
    coverage: cov.text,
    expanded: cov.k * uc,
    relativeExpanded: null,
    notes,
  };
}

/** The three lines of one static capture in mg, scaled by `c` (∂result/∂reading). */
function readingLines(
  label: string,
  r: StaticReadings,
  orientation: StaticOrientation | null,
  setup: TiltSetup,
  idealMg: number,
  c: number,
  unit: string,
  notes: string[],
): LineSpec[] {
  const sem = r.sd / Math.sqrt(r.n);
  const a = setup.lsbMg / 2;
  const lines: LineSpec[] = [
    {
      name: `${label}Repeatability (standard error of the mean)`,
      key: 'type-a',
      value: sem,
      sensitivity: c,
      dof: r.n - 1,
      type: 'A',
      distribution: 'normal',
      unit: 'mg',
      note: `s/√n = ${sem.toPrecision(3)} mg over ${r.n} readings, ν = n − 1 = ${r.n - 1}.`,
      source: 'JCGM 100:2008 §4.2',
    },
    {
      name: `${label}Sensor resolution (one LSB)`,
      key: 'resolution',
      value: a / SQRT3,
      sensitivity: c,
      dof: Infinity,
      type: 'B',
      distribution: 'rectangular',
      unit: 'mg',
      note: `One LSB = ${setup.lsbMg} mg: a = half an LSB, a/√3 (a reading's resolution, never divided by √n).`,
      source: 'JCGM 100:2008 §4.3.7, F.2.2.1',
    },
  ];
  if (orientation) {
    const half = orientationHalfWidthMg(orientation, idealMg, setup.orientationErrorDeg);
    lines.push({
      name: `${label}Orientation error (±${setup.orientationErrorDeg}°)`,
      key: 'orientation',
      value: half / SQRT3,
      sensitivity: c,
      dof: Infinity,
      type: 'B',
      distribution: 'rectangular',
      unit: 'mg',
      note:
        orientation === 'on-edge'
          ? `Across gravity the axis reads g·sin θ: ±${half.toPrecision(3)} mg for θ up to ${setup.orientationErrorDeg}°, a/√3.`
          : `Along gravity the axis reads g·cos θ, short by 0 … ${(2 * half).toPrecision(3)} mg for θ up to ${setup.orientationErrorDeg}°: a = ${half.toPrecision(3)} mg, a/√3.`,
      source: 'JCGM 100:2008 §4.3.7; tilt geometry common practice, no source',
    });
  } else {
    notes.push("No orientation recorded: the board's pose is not in the budget.");
  }
  if (unit !== 'mg')
    for (const l of lines) l.note += ` × ${Math.abs(c).toPrecision(4)} ${unit}/mg.`;
  return lines;
}

/**
 * Budget of the mean of one static acceleration capture in mg: repeatability s/√n (ν = n − 1),
 * the sensor's LSB (rectangular, half an LSB) and the board's orientation error (rectangular, see
 * orientationHalfWidthMg), combined by JCGM 100 eq. 10 with k from ν_eff (G.2b, G.4–G.6, never
 * below 2). Domain: n ≥ 2, sd ≥ 0, LSB > 0, 0 ≤ θ_max ≤ 45°.
 */
export function accelerationBudget(
  r: StaticReadings,
  orientation: StaticOrientation | null,
  setup: TiltSetup,
): PlainBudget {
  checkReadings(r, 'readings');
  const ideal = checkSetup(setup);
  const notes: string[] = [];
  return budgetOf(r.mean, readingLines('', r, orientation, setup, ideal, 1, 'mg', notes), notes);
}

/** One axis's tilt-check result: offset in mg and sensitivity in % of the ideal 1 g reading, each with its budget. */
export interface TiltCheckAxis {
  /** The ideal 1 g reading here, 1000·g/g_n mg. */
  idealMg: number;
  offsetMg: number;
  /** Measured scale as a percentage of the ideal (100 = perfect). */
  sensitivityPct: number;
  /** sensitivityPct − 100. */
  sensitivityErrorPct: number;
  offset: PlainBudget;
  sensitivity: PlainBudget;
  /** The on-edge reading: a second offset estimate, with its own budget (not compared). */
  onEdgeOffset: PlainBudget | null;
}

/**
 * Offset and sensitivity of an axis from its flat (+1 g) and inverted (−1 g) captures:
 * offset = (up + down)/2, sensitivity = (up − down)/2 ÷ (1000·g/g_n) × 100 % (the flip pair;
 * common practice, no source), each with a budget whose lines are both captures' repeatability,
 * LSB and orientation error through their sensitivity coefficients ½ and 100/(2·ideal) (JCGM 100
 * eq. 10; captures independent, so no correlation), ν_eff by G.2b, k from coverageFactor.
 * Domain: n ≥ 2 in each capture, up > down, setup as accelerationBudget.
 */
export function tiltCheckAxis(
  input: {
    flat: StaticReadings;
    inverted: StaticReadings;
    onEdge?: StaticReadings | null;
  } & TiltSetup,
): TiltCheckAxis {
  checkReadings(input.flat, 'flat');
  checkReadings(input.inverted, 'inverted');
  const ideal = checkSetup(input);
  const up = input.flat.mean;
  const down = input.inverted.mean;
  if (!(up > down))
    throw new AnalysisError(
      'bad-argument',
      'the flat capture must read more than the inverted one',
    );
  const offsetMg = (up + down) / 2;
  const sensitivityPct = ((up - down) / 2 / ideal) * 100;
  const cs = 100 / (2 * ideal);
  const offsetNotes: string[] = [];
  const sensNotes: string[] = [];
  const offset = budgetOf(
    offsetMg,
    [
      ...readingLines('Flat: ', input.flat, 'flat', input, ideal, 0.5, 'mg', offsetNotes),
      ...readingLines(
        'Inverted: ',
        input.inverted,
        'inverted',
        input,
        ideal,
        0.5,
        'mg',
        offsetNotes,
      ),
    ],
    offsetNotes,
  );
  const sensitivity = budgetOf(
    sensitivityPct,
    [
      ...readingLines('Flat: ', input.flat, 'flat', input, ideal, cs, '%', sensNotes),
      ...readingLines('Inverted: ', input.inverted, 'inverted', input, ideal, cs, '%', sensNotes),
    ],
    sensNotes,
  );
  for (const c of sensitivity.components) c.unit = 'mg';
  let onEdgeOffset: PlainBudget | null = null;
  if (input.onEdge) {
    checkReadings(input.onEdge, 'onEdge');
    onEdgeOffset = accelerationBudget(input.onEdge, 'on-edge', input);
  }
  return {
    idealMg: ideal,
    offsetMg,
    sensitivityPct,
    sensitivityErrorPct: sensitivityPct - 100,
    offset,
    sensitivity,
    onEdgeOffset,
  };
}

/** A limit on one quantity: ±limit, or bounds (one may be open). */
export interface QuantityLimit {
  limit?: number | null;
  limitLow?: number | null;
  limitHigh?: number | null;
}

/** Δ of one quantity between two tilt checks, with the comparison's verdict (null: no limit set). */
export interface TiltQuantityChange {
  delta: number;
  u: number;
  expandedUncertainty: number;
  k: number;
  effectiveDof: number;
  coverage: string;
  unit: 'mg' | '%';
  limitLow: number | null;
  limitHigh: number | null;
  verdict: Comparison['verdict'] | null;
  significant: boolean;
  budget: Comparison['budget'];
}

function hasLimit(l: QuantityLimit | null | undefined): l is QuantityLimit {
  return !!l && (l.limit != null || l.limitLow != null || l.limitHigh != null);
}

function side(b: PlainBudget, unit: 'mg' | '%') {
  const components: CompareSideLine[] = b.components.map((c) => ({ ...c }));
  return { mean: b.mean, u: b.combined, components, unit };
}

function changeOf(
  before: PlainBudget,
  after: PlainBudget,
  unit: 'mg' | '%',
  limit: QuantityLimit | null | undefined,
): TiltQuantityChange {
  const given = hasLimit(limit);
  // A quantity without a limit still gets Δ and U; the verdict is left out (the placeholder ±1
  // only lets compare() run, it decides nothing).
  const lim = given ? limit : { limit: 1 };
  const r = compare(side(before, unit), side(after, unit), {
    limit: lim.limit ?? undefined,
    limitLow: lim.limit != null ? undefined : lim.limitLow,
    limitHigh: lim.limit != null ? undefined : lim.limitHigh,
    // Sensitivity is in % of the ideal reading, so a limit in % points is a limit relative to 100 %.
    limitUnit: unit,
    nominal: unit === '%' ? 100 : undefined,
  });
  return {
    delta: r.delta,
    u: r.u,
    expandedUncertainty: r.expandedUncertainty,
    k: r.k,
    effectiveDof: r.effectiveDof,
    coverage: r.coverage,
    unit,
    limitLow: given ? r.limit.low : null,
    limitHigh: given ? r.limit.high : null,
    verdict: given ? r.verdict : null,
    significant: r.significant,
    budget: r.budget,
  };
}

/**
 * Before/after change of an axis's offset (mg) and sensitivity (% points) between two tilt checks,
 * by the comparison every capture gets (compare(): both sides' lines ∓1, ν_eff over all of them,
 * k from coverageFactor, the guard band w = U of ILAC-G8:09/2019 on each side of the limit). A
 * quantity with no limit gets Δ and U but no verdict.
 */
export function compareTiltChecks(
  before: TiltCheckAxis,
  after: TiltCheckAxis,
  limits: { offset?: QuantityLimit | null; sensitivity?: QuantityLimit | null },
): { offset: TiltQuantityChange; sensitivity: TiltQuantityChange } {
  return {
    offset: changeOf(before.offset, after.offset, 'mg', limits.offset),
    sensitivity: changeOf(before.sensitivity, after.sensitivity, '%', limits.sensitivity),
  };
}

/** A sensing axis of a 3-axis accelerometer. */
export type SensingAxis = 'x' | 'y' | 'z';

/**
 * The static orientation of one sensing axis for a capture's recorded orientation: `<axis>-up`
 * reads +1 g (the check's "flat" pose), `<axis>-down` −1 g ("inverted"), a pose with another axis
 * up or down leaves this axis level, 0 g ("on-edge"). The legacy names flat / inverted / on-edge
 * describe the Z axis (z-up, z-down, another axis up): for Z they map as before; for X and Y,
 * flat and inverted leave the axis level and on-edge (which axis was up is not recorded) gives
 * null, as do a missing record and 'other' (the tilt geometry: common practice, no source).
 */
export function axisOrientation(
  axis: SensingAxis,
  recorded: string | null | undefined,
): StaticOrientation | null {
  const legacy: Record<string, string> = { flat: 'z-up', inverted: 'z-down' };
  const r = recorded ? (legacy[recorded] ?? recorded) : null;
  if (r === 'on-edge') return axis === 'z' ? 'on-edge' : null;
  const m = r ? /^([xyz])-(up|down)$/.exec(r) : null;
  if (!m) return null;
  if (m[1] !== axis) return 'on-edge';
  return m[2] === 'up' ? 'flat' : 'inverted';
}

/** The orientation to record for a pose of the check on `axis` (the inverse of axisOrientation; Z keeps its legacy names). */
export function recordedOrientation(axis: SensingAxis, pose: StaticOrientation): string {
  if (axis === 'z') return pose;
  if (pose === 'flat') return `${axis}-up`;
  if (pose === 'inverted') return `${axis}-down`;
  // Level: the board lies flat (Z up), so X and Y both read 0 g.
  return 'z-up';
}

/** The Z axis's static orientation (axisOrientation for 'z'). */
export function zOrientation(recorded: string | null | undefined): StaticOrientation | null {
  return axisOrientation('z', recorded);
}
