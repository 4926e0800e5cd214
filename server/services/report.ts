import type pg from 'pg';
import type { Transaction } from 'sequelize';
import { Capture, Checkpoint, Dut, Instrument, Reference, Study, User } from '../models/index.js';
import { AnalysisError } from '../../shared/analysis/index.js';
import { AppError, NotFoundError } from '../errors.js';
import { compareCaptures, studyMatrix } from './comparisons.js';
import type { CaptureSummary } from './captureAnalysis.js';
import { checkSeal } from './seal.js';
import { reviewHistory } from './reviewHistory.js';
import { calibrationStatus } from './calibration.js';
import { publicInstrument } from './instruments.js';

/** The decision rule every verdict of the report follows, stated once in the report. */
export const DECISION_RULE =
  'Each before/after change Δ of a DUT is compared with its limit using a guard band equal to the expanded ' +
  'uncertainty U of Δ (coverage about 95 %), the guarded-acceptance rule of ILAC-G8: the change is "within" ' +
  'when the whole interval Δ ± U lies inside the limit, "exceeds" when the whole interval lies outside it, ' +
  'and "inconclusive" otherwise. A reference shared by both captures is treated as fully correlated and ' +
  "cancels in Δ. The baseline of each DUT is its latest finished capture at the study's first checkpoint. " +
  "A tilt check compares the change of each axis's offset and sensitivity error with the DUT's limits by the " +
  "same rule. A crystal's stability limit is judged on each capture rather than as a change: σy at the " +
  'limit\'s τ with its 95 % interval is "within" when the upper end of the interval is at or below the limit, ' +
  '"exceeds" when its lower end is above the limit, and "inconclusive" otherwise (also when the capture is ' +
  'too short for τ).';

/**
 * What a printed record leaves out of an instrument as the API shows it: its notes, link profile,
 * counter settings and standing (away, retired) — the calibration state already says the standing.
 */
const NOT_IN_RECORD = [
  'notes',
  'linkProfile',
  'counterType',
  'counterResolution',
  'awaySince',
  'retiredAt',
  'retiredReason',
] as const;

/** `o` without `keys`. */
function withoutKeys<T extends object, K extends keyof T>(o: T, keys: readonly K[]): Omit<T, K> {
  const rest: Partial<T> = { ...o };
  for (const k of keys) delete rest[k];
  return rest as Omit<T, K>;
}

/**
 * Everything the printable report shows, read from the same services the study and capture pages
 * use (the matrix, the stored capture summaries, the comparisons, the seals): nothing is
 * recomputed differently for print. When a study is approved this object is stored as the approved
 * revision's report.
 */
export async function buildStudyReport(pool: pg.Pool, studyId: number, t?: Transaction) {
  const study = await Study.findByPk(studyId, { transaction: t });
  if (!study) throw new NotFoundError('Study');
  const [checkpoints, duts, matrix, reviews] = await Promise.all([
    Checkpoint.findAll({
      where: { studyId },
      order: [
        ['position', 'ASC'],
        ['id', 'ASC'],
      ],
    }),
    Dut.findAll({ where: { studyId }, order: [['id', 'ASC']] }),
    studyMatrix(pool, studyId),
    reviewHistory(studyId, t),
  ]);

  // The captures the report uses: the latest finished one per DUT × checkpoint (the matrix's).
  const usedIds = matrix.rows.flatMap((r) =>
    r.cells.map((c) => c.capture?.id).filter((id): id is number => id != null),
  );
  const captures = usedIds.length
    ? await Capture.findAll({ where: { id: usedIds }, order: [['id', 'ASC']] })
    : [];
  const instrumentIds = [
    ...new Set(captures.map((c) => c.instrumentId).filter((x): x is number => x != null)),
  ];
  const referenceIds = [
    ...new Set(captures.map((c) => c.referenceId).filter((x): x is number => x != null)),
  ];
  const operatorIds = [
    ...new Set(captures.map((c) => c.operatorId).filter((x): x is number => x != null)),
  ];
  const [instruments, references, operators] = await Promise.all([
    instrumentIds.length
      ? Instrument.findAll({ where: { id: instrumentIds }, order: [['name', 'ASC']] })
      : [],
    referenceIds.length
      ? Reference.findAll({ where: { id: referenceIds }, order: [['name', 'ASC']] })
      : [],
    operatorIds.length ? User.findAll({ where: { id: operatorIds } }) : [],
  ]);
  const names = new Map(operators.map((u) => [u.id, u.name]));
  const people = new Map<number, string>();
  for (const id of [study.createdBy, study.submittedBy, study.approvedBy]) {
    if (id && !people.has(id))
      people.set(id, (await User.findByPk(id, { transaction: t }))?.name ?? `user ${id}`);
  }

  const captureRows = [];
  for (const c of captures) {
    const seal = await checkSeal(pool, c.id);
    const s = c.summary as CaptureSummary | null;
    captureRows.push({
      id: c.id,
      dutId: c.dutId,
      checkpointId: c.checkpointId,
      startedAt: c.startedAt,
      endedAt: c.endedAt,
      readingCount: c.readingCount,
      gateTime: c.gateTime,
      ambientC: c.ambientC,
      orientation: c.orientation,
      operator: c.operatorId ? (names.get(c.operatorId) ?? null) : null,
      instrumentId: c.instrumentId,
      referenceId: c.referenceId,
      referenceOffset: c.referenceOffset,
      referenceUncertainty: c.referenceUncertainty,
      notes: c.notes,
      seal: {
        sha256: seal.sha256,
        recomputed: seal.recomputed,
        verified: seal.verified,
        readings: seal.readings,
      },
      stats: s?.stats ?? null,
      offsetPpm: s?.offsetPpm ?? null,
      uncertainty: s?.uncertainty ?? null,
      stability: s?.stability ?? null,
      summaryNotes: s?.notes ?? [],
    });
  }

  // Per-DUT comparisons with the baseline, in full (budget of Δ, notes), as the comparison route gives them.
  const comparisons = [];
  for (const row of matrix.rows) {
    for (const cell of row.cells) {
      if (!cell.comparison || !cell.capture) continue;
      try {
        comparisons.push({
          dutId: row.dut.id,
          checkpointId: cell.checkpointId,
          result: await compareCaptures(pool, cell.comparison.before, cell.capture.id),
        });
      } catch (err) {
        if (!(err instanceof AppError) && !(err instanceof AnalysisError)) throw err;
        comparisons.push({
          dutId: row.dut.id,
          checkpointId: cell.checkpointId,
          problem: err.message,
        });
      }
    }
  }

  return {
    kind: 'driftbench-study-report' as const,
    version: 1,
    generatedAt: new Date().toISOString(),
    study: {
      id: study.id,
      title: study.title,
      process: study.process,
      description: study.description,
      status: study.status,
      revision: study.revision,
      createdAt: study.createdAt,
      createdBy: study.createdBy ? (people.get(study.createdBy) ?? null) : null,
      submittedAt: study.submittedAt,
      submittedBy: study.submittedBy ? (people.get(study.submittedBy) ?? null) : null,
      approvedAt: study.approvedAt,
      approvedBy: study.approvedBy ? (people.get(study.approvedBy) ?? null) : null,
    },
    checkpoints: checkpoints.map((c) => c.toPublic()),
    duts: duts.map((d) => d.toPublic()),
    instruments: instruments.map((i) => withoutKeys(publicInstrument(i), NOT_IN_RECORD)),
    references: references.map((r) => ({
      id: r.id,
      name: r.name,
      nominalHz: r.nominalHz,
      fractionalOffset: r.fractionalOffset,
      standardUncertainty: r.standardUncertainty,
      verifiedBy: r.verifiedBy,
      verifiedAt: r.verifiedAt,
      calibrationDue: r.calibrationDue,
      calibration: calibrationStatus(r),
    })),
    matrix,
    captures: captureRows,
    comparisons,
    reviews,
    decisionRule: DECISION_RULE,
  };
}

export type StudyReport = Awaited<ReturnType<typeof buildStudyReport>>;
