import { Reference } from '../models/index.js';

const DAY = 86_400_000;

/** Calibration state of an instrument: overdue, due within `soonDays`, or ok. */
export function calibrationState(due: string | null, now = new Date(), soonDays = 30): 'ok' | 'due-soon' | 'overdue' | 'unknown' {
  if (!due) return 'unknown';
  const left = (new Date(`${due}T23:59:59Z`).getTime() - now.getTime()) / DAY;
  if (left < 0) return 'overdue';
  if (left <= soonDays) return 'due-soon';
  return 'ok';
}

export async function listReferences() {
  const rows = await Reference.findAll({ order: [['name', 'ASC']] });
  return rows.map((r) => ({
    id: r.id,
    name: r.name,
    nominalHz: r.nominalHz,
    fractionalOffset: r.fractionalOffset,
    standardUncertainty: r.standardUncertainty,
    verifiedBy: r.verifiedBy,
    verifiedAt: r.verifiedAt,
    instrumentId: r.instrumentId,
  }));
}
