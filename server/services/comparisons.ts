import type pg from 'pg';
import { AnalysisError, compare, normalizeTuningFork } from '../../shared/analysis/index.js';
import { Capture, Checkpoint, Dut, Study } from '../models/index.js';
import { AppError, NotFoundError, ValidationError } from '../errors.js';
import { preparedFor, reduce, TUNING_FORK_B, TUNING_FORK_T0, type CaptureSummary } from './captureAnalysis.js';

/** The stored summary of a finished capture, or a fresh reduction of an open one. */
export async function summaryOf(pool: pg.Pool, c: Capture, dut: Dut | null): Promise<CaptureSummary> {
  if (c.state !== 'open' && c.summary) return c.summary as CaptureSummary;
  return reduce(c, dut, await preparedFor(pool, c));
}

/**
 * Before/after comparison of one DUT: Δ in the quantity's unit and in ppm, U (k = 2) and the
 * guard-banded verdict against the DUT's limit. Both captures must belong to the same DUT.
 */
export async function compareCaptures(pool: pg.Pool, beforeId: number, afterId: number) {
  const [before, after] = await Promise.all([Capture.findByPk(beforeId), Capture.findByPk(afterId)]);
  if (!before) throw new NotFoundError('Capture "before"');
  if (!after) throw new NotFoundError('Capture "after"');
  if (before.dutId !== after.dutId) {
    throw new ValidationError('after: both captures must be of the same DUT', [{ path: 'after', message: 'is of another DUT' }]);
  }
  const dut = await Dut.findByPk(before.dutId);
  if (!dut) throw new NotFoundError('DUT');
  const [sb, sa] = await Promise.all([summaryOf(pool, before, dut), summaryOf(pool, after, dut)]);
  if (!sb.stats || !sa.stats) throw new AppError(422, 'not-enough-readings', 'Each capture needs at least two usable readings.');

  // A tuning fork's frequency follows its parabola with temperature: when both ambients are
  // known, each mean is taken back to T0 before Δ is formed (REFERENCES: Δf/f = B·(T − T0)²).
  const normalise = dut.kind === 'tuning-fork' && before.ambientC !== null && after.ambientC !== null && before.quantity === 'frequency';
  const notes: string[] = [];
  if (normalise) {
    notes.push(
      `Tuning fork: both means normalised to ${TUNING_FORK_T0} °C with B = ${TUNING_FORK_B} ppm/°C² before comparing (ambient ${before.ambientC} °C → ${after.ambientC} °C).`,
    );
  }
  const side = (c: Capture, s: CaptureSummary) => {
    const refComponent = s.uncertainty?.components.find((x) => /reference/i.test(x.name));
    const mean = normalise ? normalizeTuningFork(s.stats!.mean, c.ambientC!, { B: TUNING_FORK_B, T0: TUNING_FORK_T0 }) : s.stats!.mean;
    return {
      mean,
      u: s.uncertainty?.combined ?? s.stats!.sem,
      uReference: refComponent?.contribution,
      // Δ in ppm is relative to the DUT's nominal, the same for both sides.
      nominal: dut.nominal,
      unit: c.unit,
      ambientC: c.ambientC ?? undefined,
    };
  };
  const sameReference = before.referenceId !== null && before.referenceId === after.referenceId;
  const result = compare(side(before, sb), side(after, sa), {
    limit: dut.limitValue,
    limitUnit: dut.limitUnit,
    nominal: dut.nominal,
    sameReference,
  });
  return {
    ...result,
    notes: [...notes, ...result.notes],
    temperatureNormalised: normalise,
    limit: dut.limitValue,
    limitUnit: dut.limitUnit,
    limitInUnit: result.limit.quantity,
    before: { id: before.id, mean: sb.stats.mean, checkpointId: before.checkpointId, ambientC: before.ambientC },
    after: { id: after.id, mean: sa.stats.mean, checkpointId: after.checkpointId, ambientC: after.ambientC },
    dut: dut.toPublic(),
  };
}

/**
 * The study matrix: for every DUT (rows) and checkpoint (columns) the latest finished capture,
 * and — from the second checkpoint on — its comparison with the DUT's baseline capture (the
 * latest finished capture at the study's first checkpoint).
 */
export async function studyMatrix(pool: pg.Pool, studyId: number) {
  const [duts, checkpoints] = await Promise.all([
    Dut.findAll({ where: { studyId }, order: [['id', 'ASC']] }),
    Checkpoint.findAll({ where: { studyId }, order: [['position', 'ASC'], ['id', 'ASC']] }),
  ]);
  if (checkpoints.length === 0 && duts.length === 0 && !(await Study.findByPk(studyId))) throw new NotFoundError('Study');
  const captures = duts.length
    ? await Capture.findAll({ where: { dutId: duts.map((d) => d.id), state: 'finished' }, order: [['endedAt', 'DESC']] })
    : [];
  const latest = new Map<string, Capture>();
  for (const c of captures) {
    const key = `${c.dutId}:${c.checkpointId}`;
    if (!latest.has(key)) latest.set(key, c);
  }
  const baselineId = checkpoints[0]?.id;
  const rows = [];
  for (const dut of duts) {
    const base = baselineId ? latest.get(`${dut.id}:${baselineId}`) : undefined;
    const cells = [];
    for (const cp of checkpoints) {
      const c = latest.get(`${dut.id}:${cp.id}`);
      if (!c) {
        cells.push({ checkpointId: cp.id, capture: null, comparison: null });
        continue;
      }
      const s = c.summary as CaptureSummary | null;
      const capture = { id: c.id, readingCount: c.readingCount, ambientC: c.ambientC, mean: s?.stats?.mean ?? null, offsetPpm: s?.offsetPpm ?? null };
      let comparison = null;
      if (base && base.id !== c.id && s?.stats && (base.summary as CaptureSummary | null)?.stats) {
        let r: Awaited<ReturnType<typeof compareCaptures>>;
        try {
          r = await compareCaptures(pool, base.id, c.id);
        } catch (err) {
          // One capture that cannot be compared (e.g. in another unit) must not hide the others.
          if (!(err instanceof AppError) && !(err instanceof AnalysisError)) throw err;
          cells.push({ checkpointId: cp.id, capture, comparison: null, problem: err.message });
          continue;
        }
        comparison = {
          before: base.id,
          delta: r.delta,
          deltaPpm: r.deltaPpm ?? null,
          expandedUncertainty: r.expandedUncertainty,
          limit: r.limit,
          limitUnit: r.limitUnit,
          limitInUnit: r.limitInUnit,
          verdict: r.verdict,
          significant: r.significant,
        };
      }
      cells.push({ checkpointId: cp.id, capture, comparison });
    }
    rows.push({ dut: dut.toPublic(), cells });
  }
  return { studyId, checkpoints: checkpoints.map((c) => c.toPublic()), rows };
}
