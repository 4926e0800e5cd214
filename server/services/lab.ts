import { Reference } from '../models/index.js';
import { pageOf } from './paging.js';
import type { Page } from '../../shared/protocol/paging.js';

const DAY = 86_400_000;

/** Calibration state of an instrument: overdue, due within `soonDays`, or ok. */
export function calibrationState(due: string | null, now = new Date(), soonDays = 30): 'ok' | 'due-soon' | 'overdue' | 'unknown' {
  if (!due) return 'unknown';
  const left = (new Date(`${due}T23:59:59Z`).getTime() - now.getTime()) / DAY;
  if (left < 0) return 'overdue';
  if (left <= soonDays) return 'due-soon';
  return 'ok';
}

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
  };
}

/** One page of frequency references, by name. */
export async function listReferences(page: Page) {
  const { rows, nextCursor } = await pageOf(Reference, page, 'name-asc');
  return { references: rows.map(publicReference), nextCursor };
}
