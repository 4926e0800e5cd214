import { QueryTypes, type Transaction } from 'sequelize';
import { Capture } from '../models/index.js';

/** `dutId:checkpointId`, the key of one matrix cell. */
export const cellKey = (dutId: number, checkpointId: number): string => `${dutId}:${checkpointId}`;

/** A capture that may stand for its cell: finished and not excluded from the evidence (aborted ones never are). */
export function isValidEvidence(c: Pick<Capture, 'state' | 'excludedAt'>): boolean {
  return c.state === 'finished' && c.excludedAt == null;
}

/** The captures a lead chose for the cells of these DUTs: cell key → capture id. */
export async function chosenCells(
  dutIds: number[],
  transaction?: Transaction,
): Promise<Map<string, number>> {
  if (dutIds.length === 0) return new Map();
  const rows = (await Capture.sequelize!.query(
    'SELECT dut_id AS "dutId", checkpoint_id AS "checkpointId", capture_id AS "captureId" FROM study_cells WHERE dut_id = ANY($1::int[])',
    { bind: [dutIds], type: QueryTypes.SELECT, transaction },
  )) as Array<{ dutId: number; checkpointId: number; captureId: number }>;
  return new Map(rows.map((r) => [cellKey(r.dutId, r.checkpointId), r.captureId]));
}

/**
 * The capture that represents each cell: the one a lead chose when it is still valid evidence,
 * otherwise the latest valid one (finished, not excluded — by end time, the latest id on a tie).
 * `captures` may hold any states; invalid ones are skipped.
 */
export function representatives(
  captures: readonly Capture[],
  chosen: ReadonlyMap<string, number>,
): Map<string, { capture: Capture; chosen: boolean }> {
  const out = new Map<string, { capture: Capture; chosen: boolean }>();
  const byId = new Map(captures.map((c) => [c.id, c]));
  for (const [key, id] of chosen) {
    const c = byId.get(id);
    if (c && isValidEvidence(c) && cellKey(c.dutId, c.checkpointId) === key)
      out.set(key, { capture: c, chosen: true });
  }
  const time = (c: Capture) => (c.endedAt ? new Date(c.endedAt).getTime() : 0);
  const latestFirst = captures
    .filter(isValidEvidence)
    .sort((a, b) => time(b) - time(a) || b.id - a.id);
  for (const c of latestFirst) {
    const key = cellKey(c.dutId, c.checkpointId);
    if (!out.has(key)) out.set(key, { capture: c, chosen: false });
  }
  return out;
}
