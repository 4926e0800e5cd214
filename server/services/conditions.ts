import { Capture, Instrument, Reference } from '../models/index.js';
import type { ComparisonInputs } from './comparisonInputs.js';
import {
  conditionMismatches,
  type CaptureConditions,
  type ConditionMismatch,
} from '../../shared/analysis/conditions.js';

/** A capture's recorded conditions, with the names of its reference and instrument for the messages. */
async function conditionsOf(c: Capture, loaded?: ComparisonInputs): Promise<CaptureConditions> {
  const [reference, instrument] = loaded
    ? [
        c.referenceId ? loaded.references.get(c.referenceId) : undefined,
        c.instrumentId ? loaded.instruments.get(c.instrumentId) : undefined,
      ]
    : await Promise.all([
        c.referenceId ? Reference.findByPk(c.referenceId, { attributes: ['id', 'name'] }) : null,
        c.instrumentId ? Instrument.findByPk(c.instrumentId, { attributes: ['id', 'name'] }) : null,
      ]);
  return {
    referenceId: c.referenceId,
    referenceName: reference?.name ?? null,
    gateTime: c.gateTime,
    instrumentId: c.instrumentId,
    instrumentName: instrument?.name ?? null,
    orientation: c.orientation,
    ambientC: c.ambientC,
    simulated: c.simulated ?? false,
  };
}

/**
 * The conditions that differ between two captures (shared/analysis/conditions.ts), shown beside
 * every verdict; captures given by id are loaded. Empty when either capture is missing.
 */
export async function conditionsBetween(
  before: Capture | number,
  after: Capture | number,
  loaded?: ComparisonInputs,
): Promise<ConditionMismatch[]> {
  const [b, a] = await Promise.all([
    typeof before === 'number' ? Capture.findByPk(before) : before,
    typeof after === 'number' ? Capture.findByPk(after) : after,
  ]);
  if (!b || !a) return [];
  const [cb, ca] = await Promise.all([conditionsOf(b, loaded), conditionsOf(a, loaded)]);
  return conditionMismatches(cb, ca);
}
