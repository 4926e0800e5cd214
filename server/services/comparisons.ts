import type pg from 'pg';
import { compare } from '../../shared/analysis/index.js';
import { Capture, Dut } from '../models/index.js';
import { AppError, NotFoundError, ValidationError } from '../errors.js';
import { preparedFor, reduce, type CaptureSummary } from './captureAnalysis.js';

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

  const side = (c: Capture, s: CaptureSummary) => {
    const refComponent = s.uncertainty?.components.find((x) => /reference/i.test(x.name));
    return {
      mean: s.stats!.mean,
      u: s.uncertainty?.combined ?? s.stats!.sem,
      uReference: refComponent?.contribution,
      nominal: c.nominal ?? dut.nominal,
      unit: c.unit,
      ambientC: c.ambientC ?? undefined,
    };
  };
  const sameReference = before.referenceId !== null && before.referenceId === after.referenceId;
  const result = compare(side(before, sb), side(after, sa), {
    limit: dut.limitValue,
    limitUnit: dut.limitUnit,
    nominal: before.nominal ?? dut.nominal,
    sameReference,
  });
  return {
    ...result,
    limit: dut.limitValue,
    limitUnit: dut.limitUnit,
    limitInUnit: result.limit.quantity,
    before: { id: before.id, mean: sb.stats.mean, checkpointId: before.checkpointId, ambientC: before.ambientC },
    after: { id: after.id, mean: sa.stats.mean, checkpointId: after.checkpointId, ambientC: after.ambientC },
    dut: dut.toPublic(),
  };
}
