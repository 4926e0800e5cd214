import type pg from 'pg';
import {
  AnalysisError,
  compare,
  tuningForkDelta,
  type DeltaTerm,
} from '../../shared/analysis/index.js';
import { Capture, Checkpoint, Dut, Reference, Study } from '../models/index.js';
import { AppError, NotFoundError, ValidationError } from '../errors.js';
import { conditionsBetween } from './conditions.js';
import { loadComparisonInputs, type ComparisonInputs } from './comparisonInputs.js';
import { baselineOfOrientation, needsSameOrientation, orientationWord } from './baseline.js';
import { tiltCellsFor, tiltChecksOf } from './tiltChecks.js';
import { judgeStability, stabilityLimitOf } from './stabilityLimits.js';
import { summaryOf } from './summaries.js';
import { chosenCells, representatives } from './cells.js';
import {
  LAB_AMBIENT_RANGE_C,
  THERMOMETER_BIAS_U_C,
  THERMOMETER_U_C,
  type CaptureSummary,
} from './captureAnalysis.js';

const DAY_MS = 86_400_000;

/** Half-width of a counter's internal timebase offset when no reference is used (common practice, no source). */
export const DEFAULT_TIMEBASE_HALF_WIDTH = 1e-6;

/**
 * Ageing per day (fractional, taken as a standard uncertainty) of a reference with no rate on
 * record, by kind (common practice, no source): a disciplined source does not age, an atomic one
 * barely, an OCXO and a counter's internal timebase do.
 */
export const DEFAULT_AGEING_PER_DAY: Record<string, number> = {
  'gnss-disciplined': 0,
  rubidium: 1e-11,
  ocxo: 1e-9,
  'internal-timebase': 1e-8,
  other: 1e-8,
};

/**
 * Resolution (one LSB) of a reading, per unit, for a capture without a frequency budget
 * (review8 F7; common practice, no source): mg for the demo's ±2 g accelerometer at 0.0625 mg/LSB,
 * a 6½-digit voltmeter's last digit, one count.
 */
export const DEFAULT_LSB: Record<string, number> = {
  mg: 0.0625,
  g: 0.0625e-3,
  V: 1e-6,
  mV: 1e-3,
  counts: 1,
  count: 1,
};

function sameInstant(a: string | Date | null, b: string | Date | null): boolean {
  if (a === null || b === null) return a === b;
  return new Date(a).getTime() === new Date(b).getTime();
}

/**
 * The budget of a capture that has none of its own (every non-frequency capture): the standard
 * error of the mean with ν = n − 1 (JCGM 100 §4.2) and the reading's resolution, rectangular with
 * a = half an LSB (§4.3.7, F.2.2.1), so that identical readings never give U = 0 (review8 F7).
 */
function plainBudget(c: Capture, s: CaptureSummary, notes: string[]) {
  const { n, sem } = s.stats!;
  const lines: Array<{
    name: string;
    value: number;
    contribution: number;
    dof: number;
    type: 'A' | 'B';
    distribution: 'normal' | 'rectangular';
    unit: string;
    note: string;
    source: string;
    key: string;
  }> = [
    {
      name: 'Repeatability (standard error of the mean)',
      value: sem,
      contribution: sem,
      dof: Math.max(1, n - 1),
      type: 'A',
      distribution: 'normal',
      unit: c.unit,
      note: `s/√n over ${n} readings, ν = n − 1 = ${n - 1}.`,
      source: 'JCGM 100:2008 §4.2',
      key: 'type-a',
    },
  ];
  const lsb = DEFAULT_LSB[c.unit];
  if (lsb !== undefined) {
    const a = lsb / 2;
    lines.push({
      name: 'Reading resolution',
      value: a / Math.sqrt(3),
      contribution: a / Math.sqrt(3),
      dof: Infinity,
      type: 'B',
      distribution: 'rectangular',
      unit: c.unit,
      note: `One LSB = ${lsb} ${c.unit} (a default for this unit): a = half an LSB, a/√3.`,
      source: 'JCGM 100:2008 §4.3.7, F.2.2.1; LSB common practice, no source',
      key: 'resolution',
    });
  } else if (!notes.some((x) => x.startsWith('No reading resolution'))) {
    notes.push(
      `No reading resolution is known for ${c.unit}: identical readings would understate U.`,
    );
  }
  return lines;
}

/**
 * Before/after comparison of one DUT: Δ in the quantity's unit and in ppm, U (k = 2) and the
 * guard-banded verdict against the DUT's limit. Both captures must belong to the same DUT.
 */
export async function compareCaptures(
  pool: pg.Pool,
  beforeId: number,
  afterId: number,
  loaded?: ComparisonInputs,
) {
  // The matrix passes what it loaded for all its cells; a single comparison loads its own.
  const [before, after] = loaded
    ? [loaded.captures.get(beforeId) ?? null, loaded.captures.get(afterId) ?? null]
    : await Promise.all([Capture.findByPk(beforeId), Capture.findByPk(afterId)]);
  if (!before) throw new NotFoundError('Capture "before"');
  if (!after) throw new NotFoundError('Capture "after"');
  // An aborted capture keeps its readings as a record, never as evidence for a verdict (issue 13).
  for (const [side, c] of [
    ['before', before],
    ['after', after],
  ] as const) {
    if (c.state === 'aborted') {
      throw new AppError(
        409,
        'capture-aborted',
        `Capture ${c.id} ("${side}") was aborted${c.abortReason ? ` (${c.abortReason})` : ''}: it enters no comparison.`,
        { captureId: c.id },
      );
    }
  }
  if (before.dutId !== after.dutId) {
    throw new ValidationError('after: both captures must be of the same DUT', [
      { path: 'after', message: 'is of another DUT' },
    ]);
  }
  const dut = loaded?.duts.get(before.dutId) ?? (await Dut.findByPk(before.dutId));
  if (!dut) throw new NotFoundError('DUT');
  if (
    (needsSameOrientation(before) || needsSameOrientation(after)) &&
    (before.orientation ?? null) !== (after.orientation ?? null)
  ) {
    throw new AppError(
      422,
      'orientation-mismatch',
      `An acceleration capture is compared only with one of the same orientation: before ${orientationWord(before.orientation)}, after ${orientationWord(after.orientation)}.`,
    );
  }
  const [sb, sa] = await Promise.all([summaryOf(pool, before, dut), summaryOf(pool, after, dut)]);
  if (!sb.stats || !sa.stats)
    throw new AppError(
      422,
      'not-enough-readings',
      'Each capture needs at least two usable readings.',
    );

  // A tuning fork's frequency follows its parabola with temperature: each mean is taken to the
  // turnover T0 before Δ is formed, and T0, B and the thermometer's bias — the same for both
  // captures — enter Δ's budget once with their combined sensitivities (tuningForkDelta). A side
  // without a recorded ambient is taken anywhere in the lab's range, never at 25 °C.
  const frequency = before.quantity === 'frequency' && after.quantity === 'frequency';
  const normalise = dut.kind === 'tuning-fork' && frequency;
  const nominal = dut.nominal;
  const notes: string[] = [];
  const deltaTerms: DeltaTerm[] = [];
  const replaceKeys: string[] = [];
  let shifts = { before: 0, after: 0 };
  if (normalise) {
    const fork = dut.tuningFork();
    const d = tuningForkDelta(before.ambientC, after.ambientC, fork, {
      uReading: THERMOMETER_U_C,
      uBias: THERMOMETER_BIAS_U_C,
      labRange: LAB_AMBIENT_RANGE_C,
    });
    shifts = { before: d.shiftBeforePpm, after: d.shiftAfterPpm };
    replaceKeys.push('temperature');
    for (const t of d.terms) {
      deltaTerms.push({
        ...t,
        sensitivity: t.sensitivityPpm * nominal * 1e-6,
        note: `${t.note} (${t.sensitivityPpm.toPrecision(3)} ppm per ${t.unit})`,
      });
    }
    notes.push(
      `Tuning fork: both means taken to T0 = ${fork.T0.toPrecision(3)} °C with B = ${fork.B} ppm/°C²${fork.defaults ? ' (defaults, common practice)' : " (this DUT's own)"}; ` +
        `ambient ${before.ambientC ?? 'not recorded'} → ${after.ambientC ?? 'not recorded'} °C.`,
      ...d.notes,
    );
  }
  // One reference is one input used twice (r = 1) only while it is the same calibration: the same
  // reference, verified at the same moment, with the same offset copied into both captures. Once
  // re-verified in between, the two offsets come from two independent calibrations and do not
  // cancel (r = 0; review8 F5).
  const sameReferenceId = before.referenceId !== null && before.referenceId === after.referenceId;
  const sameCalibration =
    sameReferenceId &&
    before.referenceOffset === after.referenceOffset &&
    before.referenceUncertainty === after.referenceUncertainty &&
    sameInstant(before.referenceVerifiedAt, after.referenceVerifiedAt);
  const sameReference = sameCalibration;
  if (sameReferenceId && !sameCalibration) {
    notes.push(
      'The reference was re-verified between the captures: the two offsets come from independent calibrations, so they are combined as independent (r = 0) and do not cancel in Δ.',
    );
  }
  const hasReference = (c: Capture) => c.referenceId !== null && c.referenceUncertainty !== null;
  if (sameReference && frequency) {
    // One reference in both captures: its offset cancels, its change between them does not.
    const [mb, ma] = [sb.midpoint ?? null, sa.midpoint ?? null];
    let rate: number | null =
      after.referenceAgeingPerDay !== null
        ? Math.hypot(after.referenceAgeingPerDay, after.referenceAgeingUPerDay ?? 0)
        : null;
    let rateText =
      rate !== null
        ? `a = ${after.referenceAgeingPerDay!.toExponential(2)}/day from its calibration record`
        : '';
    if (rate === null) {
      const ref =
        after.referenceId === null
          ? null
          : loaded
            ? (loaded.references.get(after.referenceId) ?? null)
            : await Reference.findByPk(after.referenceId);
      rate = DEFAULT_AGEING_PER_DAY[ref?.kind ?? 'other'] ?? DEFAULT_AGEING_PER_DAY.other;
      rateText = `no ageing rate recorded: ${rate.toExponential(1)}/day assumed for a ${ref?.kind ?? 'reference of unknown kind'} (common practice, no source)`;
      notes.push(
        `The reference has no ageing rate recorded: its change between the captures is taken as ${rate.toExponential(1)}/day (a default for its kind). Record the rate to replace it.`,
      );
    }
    if (mb && ma) {
      const days = Math.abs(new Date(ma).getTime() - new Date(mb).getTime()) / DAY_MS;
      replaceKeys.push('reference-ageing');
      deltaTerms.push({
        name: 'Reference ageing between captures',
        symbol: 'u_age',
        value: rate * days,
        unit: '',
        sensitivity: nominal,
        distribution: 'normal',
        note:
          `The shared reference ages between the captures, ${days.toPrecision(3)} days apart: √(a² + u(a)²) × days = ${(rate * days).toExponential(2)} ` +
          `(${rateText}), × nominal. Its offset cancels in Δ; this change does not.`,
        source: 'Reference calibration record; JCGM 100 §5.2',
      });
    } else {
      notes.push(
        "A capture has no time stamps for its readings: the reference's ageing between the captures is not in Δ's budget.",
      );
    }
  } else if (frequency && (!hasReference(before) || !hasReference(after))) {
    // No reference: nothing in either budget covers the counter's own timebase, whose offset
    // changes between captures (ageing, temperature, a different counter). A default term for it
    // (review8 F4): ±1 ppm rectangular, a counter's internal timebase (common practice, no source).
    deltaTerms.push({
      name: 'Counter timebase between captures (no reference)',
      symbol: 'u_tb',
      value: DEFAULT_TIMEBASE_HALF_WIDTH / Math.sqrt(3),
      unit: '',
      sensitivity: nominal,
      distribution: 'rectangular',
      note:
        `No reference ${!hasReference(before) && !hasReference(after) ? 'in either capture' : 'in one capture'}: the counter's timebase may differ between them by up to ` +
        `±${DEFAULT_TIMEBASE_HALF_WIDTH.toExponential(0)} (a counter's internal timebase, default), a/√3 × nominal.`,
      source: 'Common practice, no source; JCGM 100 §4.3.7',
    });
    notes.push(
      "No reference was used: a default ±1 ppm (rectangular) for the counter's timebase between the captures is in Δ's budget. Measure against a verified reference to narrow U.",
    );
  }
  const side = (c: Capture, s: CaptureSummary, shiftPpm: number) => {
    const refComponent = s.uncertainty?.components.find(
      (x) => x.key === 'reference-offset' || /reference offset/i.test(x.name),
    );
    const mean = normalise ? s.stats!.mean / (1 + shiftPpm * 1e-6) : s.stats!.mean;
    const lines = s.uncertainty?.components ?? plainBudget(c, s, notes);
    const u =
      s.uncertainty?.combined ?? Math.sqrt(lines.reduce((acc, l) => acc + l.contribution ** 2, 0));
    return {
      mean,
      u,
      uReference: refComponent?.contribution,
      components: lines,
      // Δ in ppm is relative to the DUT's nominal, the same for both sides.
      nominal,
      unit: c.unit,
      ambientC: c.ambientC ?? undefined,
    };
  };
  const result = compare(side(before, sb, shifts.before), side(after, sa, shifts.after), {
    limit: dut.limitValue ?? undefined,
    limitLow: dut.limitValue === null ? dut.limitLow : undefined,
    limitHigh: dut.limitValue === null ? dut.limitHigh : undefined,
    limitUnit: dut.limitUnit,
    nominal,
    sameReference,
    deltaTerms,
    replaceKeys,
  });
  return {
    ...result,
    notes: [...notes, ...result.notes],
    temperatureNormalised: normalise,
    limit: dut.limitValue,
    limitLow: result.limit.givenLow,
    limitHigh: result.limit.givenHigh,
    limitUnit: dut.limitUnit,
    limitInUnit: result.limit.quantity,
    limitLowInUnit: result.limit.low,
    limitHighInUnit: result.limit.high,
    before: {
      id: before.id,
      mean: sb.stats.mean,
      checkpointId: before.checkpointId,
      ambientC: before.ambientC,
    },
    after: {
      id: after.id,
      mean: sa.stats.mean,
      checkpointId: after.checkpointId,
      ambientC: after.ambientC,
    },
    dut: dut.toPublic(),
  };
}

/**
 * The study matrix: for every DUT (rows) and checkpoint (columns) the capture that represents the
 * cell — the one a lead chose, else the latest valid one (finished, not excluded) — and, from the
 * second checkpoint on, its comparison with the DUT's baseline capture (the representative at the
 * study's first checkpoint). Archived DUTs and checkpoints are left out.
 */
export async function studyMatrix(pool: pg.Pool, studyId: number) {
  // Archived DUTs and checkpoints keep their captures but leave the matrix.
  const [duts, checkpoints] = await Promise.all([
    Dut.findAll({ where: { studyId, archivedAt: null }, order: [['id', 'ASC']] }),
    Checkpoint.findAll({
      where: { studyId, archivedAt: null },
      order: [
        ['position', 'ASC'],
        ['id', 'ASC'],
      ],
    }),
  ]);
  if (checkpoints.length === 0 && duts.length === 0 && !(await Study.findByPk(studyId)))
    throw new NotFoundError('Study');
  const dutIds = duts.map((d) => d.id);
  const [captures, chosen] = await Promise.all([
    dutIds.length
      ? Capture.findAll({ where: { dutId: dutIds, state: 'finished', excludedAt: null } })
      : Promise.resolve([]),
    chosenCells(dutIds),
  ]);
  // Each cell: the capture a lead chose, else the latest valid one (finished, not excluded).
  const cellOf = representatives(captures, chosen);
  const latest = new Map([...cellOf].map(([key, v]) => [key, v.capture]));
  // Everything the cells' comparisons read, loaded once (two queries), so no cell queries alone;
  // the accelerometers' tilt checks likewise in one query for the whole study.
  const loaded = await loadComparisonInputs(captures, duts);
  const tiltRows = await tiltChecksOf(
    duts,
    checkpoints.map((x) => x.id),
  );
  const baselineId = checkpoints[0]?.id;
  const rows = [];
  for (const dut of duts) {
    const rowBase = baselineId ? latest.get(`${dut.id}:${baselineId}`) : undefined;
    const baseCandidates = captures.filter(
      (x) => x.dutId === dut.id && x.checkpointId === baselineId,
    );
    const cells = [];
    for (const cp of checkpoints) {
      const c = latest.get(`${dut.id}:${cp.id}`);
      if (!c) {
        cells.push({ checkpointId: cp.id, capture: null, comparison: null });
        continue;
      }
      const s = c.summary as CaptureSummary | null;
      const capture = {
        id: c.id,
        readingCount: c.readingCount,
        ambientC: c.ambientC,
        mean: s?.stats?.mean ?? null,
        offsetPpm: s?.offsetPpm ?? null,
        simulated: c.simulated ?? false,
        sealBroken: c.sealBrokenAt != null,
        chosen: cellOf.get(`${dut.id}:${cp.id}`)?.chosen ?? false,
      };
      // A crystal's stability limit: judged on this capture from the DUT's current limit (read
      // time, so a changed limit never leaves a stale verdict), with the baseline's σy beside it.
      const stab = stabilityLimitOf(dut)
        ? { stability: await judgeStability(pool, c, dut, rowBase ?? null) }
        : {};
      // Acceleration is compared only with a baseline of the same orientation (services/baseline.ts).
      const { base, problem: orientationProblem } = baselineOfOrientation(
        c,
        rowBase,
        baseCandidates,
      );
      if (orientationProblem && cp.id !== baselineId) {
        cells.push({ checkpointId: cp.id, capture, comparison: null, problem: orientationProblem });
        continue;
      }
      let comparison = null;
      if (base && base.id !== c.id && s?.stats && (base.summary as CaptureSummary | null)?.stats) {
        // (Summaries stored by an older version are recomputed inside compareCaptures.)
        let r: Awaited<ReturnType<typeof compareCaptures>>;
        try {
          r = await compareCaptures(pool, base.id, c.id, loaded);
        } catch (err) {
          // One capture that cannot be compared (e.g. in another unit) must not hide the others.
          if (!(err instanceof AppError) && !(err instanceof AnalysisError)) throw err;
          cells.push({
            checkpointId: cp.id,
            capture,
            comparison: null,
            problem: err.message,
            ...stab,
          });
          continue;
        }
        comparison = {
          before: base.id,
          delta: r.delta,
          deltaPpm: r.deltaPpm ?? null,
          expandedUncertainty: r.expandedUncertainty,
          k: r.k,
          effectiveDof: r.effectiveDof,
          coverage: r.coverage,
          limit: r.limit,
          limitLow: r.limitLow,
          limitHigh: r.limitHigh,
          limitUnit: r.limitUnit,
          limitInUnit: r.limitInUnit,
          limitLowInUnit: r.limitLowInUnit,
          limitHighInUnit: r.limitHighInUnit,
          verdict: r.verdict,
          significant: r.significant,
          conditions: await conditionsBetween(base, c, loaded),
        };
      }
      cells.push({ checkpointId: cp.id, capture, comparison, ...stab });
    }
    // An accelerometer's tilt checks: the DUT's result per checkpoint and its change per axis (other kinds' cells carry none).
    const tilt = await tiltCellsFor(
      dut,
      checkpoints.map((x) => x.id),
      tiltRows,
    );
    rows.push({
      dut: dut.toPublic(),
      cells:
        dut.kind === 'accelerometer'
          ? cells.map((cell) => ({ ...cell, tiltCheck: tilt.get(cell.checkpointId) ?? null }))
          : cells,
    });
  }
  return { studyId, checkpoints: checkpoints.map((c) => c.toPublic()), rows };
}
