import type pg from 'pg';
import { Capture, Checkpoint, Dut, TiltCheck } from '../models/index.js';
import { AppError, NotFoundError, ValidationError } from '../errors.js';
import { audit } from './audit.js';
import { assertStudyWritable } from './studyLock.js';
import { summaryOf } from './summaries.js';
import {
  AnalysisError,
  axisOrientation,
  compareTiltChecks,
  DEFAULT_ACCEL_LSB_MG,
  DEFAULT_ORIENTATION_ERROR_DEG,
  G_N,
  tiltCheckAxis,
  type QuantityLimit,
  type TiltCheckAxis,
} from '../../shared/analysis/index.js';
import {
  spiAxisOf,
  type Axis,
  type MatrixTiltCell,
  type TiltChange,
  type TiltCheckCreate,
} from '../../shared/protocol/accelerometer.js';
import type { StaticOrientation, TiltQuantityChange } from '../../shared/analysis/tiltCheck.js';

/** A role's pose in words, for the refusal ("x-up (+1 g)"). */
const POSE_WORDS: Record<StaticOrientation, (axis: Axis) => string> = {
  flat: (a) => (a === 'z' ? 'flat' : `${a}-up (+1 g on ${a.toUpperCase()})`),
  inverted: (a) => (a === 'z' ? 'inverted' : `${a}-down (−1 g on ${a.toUpperCase()})`),
  'on-edge': (a) => (a === 'z' ? 'on-edge' : `a pose with ${a.toUpperCase()} level (0 g)`),
};

const ROLE: Record<'flatCaptureId' | 'invertedCaptureId' | 'onEdgeCaptureId', StaticOrientation> = {
  flatCaptureId: 'flat',
  invertedCaptureId: 'inverted',
  onEdgeCaptureId: 'on-edge',
};

/**
 * Records a guided tilt check as the DUT's result at a checkpoint: the captures must be this
 * accelerometer's finished acceleration captures (in mg) at that checkpoint, each in the
 * orientation of its role for the check's axis (axisOrientation: `<axis>-up` +1 g, `<axis>-down`
 * −1 g, another axis up or down level; Z also by its old names flat / on-edge / inverted) and, where
 * its link profile names the register it polled, reading that axis; the result is formed from their stored statistics (tiltCheckAxis) and
 * stored with its budgets. Refused while the study is locked; audited.
 */
export async function recordTiltCheck(
  pool: pg.Pool,
  dutId: number,
  input: TiltCheckCreate,
  actorId: number,
) {
  const dut = await Dut.findByPk(dutId);
  if (!dut) throw new NotFoundError('DUT');
  if (dut.kind !== 'accelerometer') {
    throw new AppError(
      409,
      'not-an-accelerometer',
      `A tilt check belongs to an accelerometer; this DUT is a ${dut.kind}.`,
    );
  }
  const checkpoint = await Checkpoint.findByPk(input.checkpointId);
  if (!checkpoint || checkpoint.studyId !== dut.studyId) {
    throw new ValidationError("checkpointId: is not a checkpoint of this DUT's study", [
      { path: 'checkpointId', message: "is not a checkpoint of this DUT's study" },
    ]);
  }
  const axis: Axis = input.axis ?? 'z';
  const stats: Partial<Record<StaticOrientation, { n: number; mean: number; sd: number }>> = {};
  for (const field of ['flatCaptureId', 'invertedCaptureId', 'onEdgeCaptureId'] as const) {
    const id = input[field];
    if (id == null) continue;
    const c = await Capture.findByPk(id);
    const fail = (message: string) =>
      new ValidationError(`${field}: ${message}`, [{ path: field, message }]);
    if (!c || c.dutId !== dutId) throw fail('is not a capture of this DUT');
    if (c.checkpointId !== input.checkpointId) throw fail('was taken at another checkpoint');
    if (c.quantity !== 'acceleration' || c.unit !== 'mg')
      throw fail('is not an acceleration capture in mg');
    if (axisOrientation(axis, c.orientation) !== ROLE[field])
      throw fail(
        `was recorded ${c.orientation ?? 'without an orientation'}, not ${POSE_WORDS[ROLE[field]](axis)}`,
      );
    const read = spiAxisOf(c.linkProfile);
    if (read !== null && read !== axis)
      throw fail(`read the ${read.toUpperCase()} axis, not ${axis.toUpperCase()}`);
    if (c.state !== 'finished') throw fail('is not finished');
    const s = await summaryOf(pool, c, dut);
    if (!s.stats || s.stats.n < 2) throw fail('has fewer than two usable readings');
    stats[ROLE[field]] = { n: s.stats.n, mean: s.stats.mean, sd: s.stats.sd };
  }
  const setup = {
    localGravity: input.localGravity ?? G_N,
    lsbMg: input.lsbMg ?? DEFAULT_ACCEL_LSB_MG,
    orientationErrorDeg: input.orientationErrorDeg ?? DEFAULT_ORIENTATION_ERROR_DEG,
  };
  let result: TiltCheckAxis;
  try {
    result = tiltCheckAxis({
      flat: stats.flat!,
      inverted: stats.inverted!,
      onEdge: stats['on-edge'] ?? null,
      ...setup,
    });
  } catch (err) {
    if (err instanceof AnalysisError) throw new AppError(422, 'tilt-check-not-formed', err.message);
    throw err;
  }
  const row = await Dut.sequelize!.transaction(async (transaction) => {
    await assertStudyWritable('dut', dutId, 'recording a tilt check', transaction);
    const created = await TiltCheck.create(
      {
        dutId,
        checkpointId: input.checkpointId,
        axis,
        flatCaptureId: input.flatCaptureId,
        invertedCaptureId: input.invertedCaptureId,
        onEdgeCaptureId: input.onEdgeCaptureId ?? null,
        ...setup,
        // JSON has no Infinity: type B lines' ν = ∞ is stored as null, as every budget in the API.
        result: JSON.parse(JSON.stringify(result)),
        createdBy: actorId,
      },
      { transaction },
    );
    await audit(
      actorId,
      'tilt-check.create',
      'dut',
      dutId,
      {
        tiltCheckId: created.id,
        checkpointId: input.checkpointId,
        axis: created.axis,
        offsetMg: result.offsetMg,
        sensitivityErrorPct: result.sensitivityErrorPct,
        captures: {
          flat: input.flatCaptureId,
          inverted: input.invertedCaptureId,
          onEdge: input.onEdgeCaptureId ?? null,
        },
      },
      transaction,
    );
    return created;
  });
  return row.toPublic();
}

/** Every tilt check of a DUT, oldest first. */
export async function listTiltChecks(dutId: number) {
  const dut = await Dut.findByPk(dutId);
  if (!dut) throw new NotFoundError('DUT');
  const rows = await TiltCheck.findAll({ where: { dutId }, order: [['id', 'ASC']] });
  return rows.map((r) => r.toPublic());
}

/** A stored budget back in the analysis' shape: ν stored as null (JSON) is ∞ again. */
function revive(r: TiltCheckAxis): TiltCheckAxis {
  const fix = <
    T extends { components: Array<{ dof: number | null }>; effectiveDof: number | null },
  >(
    b: T,
  ): T => ({
    ...b,
    effectiveDof: b.effectiveDof ?? Infinity,
    components: b.components.map((c) => ({ ...c, dof: c.dof ?? Infinity })),
  });
  return {
    ...r,
    offset: fix(r.offset),
    sensitivity: fix(r.sensitivity),
    onEdgeOffset: r.onEdgeOffset ? fix(r.onEdgeOffset) : null,
  };
}

function view(c: TiltQuantityChange): TiltChange {
  return {
    delta: c.delta,
    expandedUncertainty: c.expandedUncertainty,
    k: c.k,
    coverage: c.coverage,
    unit: c.unit,
    limitLow: c.limitLow,
    limitHigh: c.limitHigh,
    verdict: c.verdict,
    significant: c.significant,
  };
}

/** The DUT's offset and sensitivity limits: offset from its limit columns (mg), sensitivity from `limits`. */
export function tiltLimits(dut: Dut): {
  offset: QuantityLimit | null;
  sensitivity: QuantityLimit | null;
} {
  const offset =
    dut.limitUnit === 'mg' &&
    (dut.limitValue !== null || dut.limitLow !== null || dut.limitHigh !== null)
      ? { limit: dut.limitValue, limitLow: dut.limitLow, limitHigh: dut.limitHigh }
      : null;
  return { offset, sensitivity: dut.quantityLimits?.sensitivity ?? null };
}

/** The tilt checks of every accelerometer among `duts` at these checkpoints, oldest first: one query for a whole matrix. */
export async function tiltChecksOf(
  duts: readonly Dut[],
  checkpointIds: number[],
): Promise<TiltCheck[]> {
  const ids = duts.filter((d) => d.kind === 'accelerometer').map((d) => d.id);
  if (ids.length === 0 || checkpointIds.length === 0) return [];
  return TiltCheck.findAll({
    where: { dutId: ids, checkpointId: checkpointIds },
    order: [['id', 'ASC']],
  });
}

/**
 * The tilt-check part of an accelerometer's matrix cells: per checkpoint the latest check, and
 * from the second checkpoint on each axis's change against the baseline's latest check. The
 * matrix passes the rows it loaded for all its DUTs (`tiltChecksOf`); alone, the DUT's are read.
 */
export async function tiltCellsFor(
  dut: Dut,
  checkpointIds: number[],
  preloaded?: readonly TiltCheck[],
): Promise<Map<number, MatrixTiltCell>> {
  const cells = new Map<number, MatrixTiltCell>();
  if (dut.kind !== 'accelerometer' || checkpointIds.length === 0) return cells;
  const rows = preloaded
    ? preloaded.filter((r) => r.dutId === dut.id && checkpointIds.includes(r.checkpointId))
    : await TiltCheck.findAll({
        where: { dutId: dut.id, checkpointId: checkpointIds },
        order: [['id', 'ASC']],
      });
  // Latest per checkpoint and axis.
  const latest = new Map<number, Map<Axis, TiltCheck>>();
  for (const r of rows) {
    const m = latest.get(r.checkpointId) ?? new Map<Axis, TiltCheck>();
    m.set(r.axis, r);
    latest.set(r.checkpointId, m);
  }
  const limits = tiltLimits(dut);
  const baseline = latest.get(checkpointIds[0]);
  for (const cpId of checkpointIds) {
    const here = latest.get(cpId);
    if (!here) continue;
    const axes: MatrixTiltCell['check']['axes'] = {};
    let newest = 0;
    for (const [axis, r] of here) {
      const x = revive(r.result);
      newest = Math.max(newest, r.id);
      axes[axis] = {
        offsetMg: x.offsetMg,
        uOffsetMg: x.offset.combined,
        offsetExpanded: x.offset.expanded,
        sensitivityErrorPct: x.sensitivityErrorPct,
        uSensitivityPct: x.sensitivity.combined,
        sensitivityExpanded: x.sensitivity.expanded,
      };
    }
    const cell: MatrixTiltCell = { check: { id: newest, axes }, change: null };
    if (cpId !== checkpointIds[0]) {
      if (!baseline) {
        cell.problem = 'No tilt check at the baseline to compare with.';
      } else {
        const changeAxes: NonNullable<MatrixTiltCell['change']>['axes'] = {};
        let before = 0;
        for (const [axis, r] of here) {
          const b = baseline.get(axis);
          if (!b) continue;
          before = Math.max(before, b.id);
          const ch = compareTiltChecks(revive(b.result), revive(r.result), limits);
          changeAxes[axis] = { offset: view(ch.offset), sensitivity: view(ch.sensitivity) };
        }
        if (Object.keys(changeAxes).length) cell.change = { before, axes: changeAxes };
        else cell.problem = "The baseline's tilt check is of another axis.";
      }
    }
    cells.set(cpId, cell);
  }
  return cells;
}
