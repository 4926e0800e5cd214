import { Reference } from '../models/index.js';
import { pageOf } from './paging.js';
import { calibrationStatus } from './calibration.js';
import type { Page } from '../../shared/protocol/paging.js';

/** What the API shows of a frequency reference: its registration and calibration record. */
export function publicReference(r: Reference) {
  return {
    id: r.id,
    name: r.name,
    kind: r.kind,
    nominalHz: r.nominalHz,
    fractionalOffset: r.fractionalOffset,
    standardUncertainty: r.standardUncertainty,
    verifiedBy: r.verifiedBy,
    verifiedAt: r.verifiedAt,
    ageingPerDay: r.ageingPerDay,
    ageingUPerDay: r.ageingUPerDay,
    instrumentId: r.instrumentId,
    calibrationDue: r.calibrationDue ?? null,
    calibration: calibrationStatus(r),
    awaySince: r.awaySince ?? null,
    retiredAt: r.retiredAt ? r.retiredAt.toISOString() : null,
    retiredReason: r.retiredReason ?? null,
    labDefault: r.labDefault ?? false,
  };
}

/** One page of frequency references, by name. */
export async function listReferences(page: Page) {
  const { rows, nextCursor } = await pageOf(Reference, page, 'name-asc');
  return { references: rows.map(publicReference), nextCursor };
}
