/**
 * A crystal's stability limit judged on a capture (issue 13): σy at the limit's τ with its 95 %
 * interval and the verdict, formed by the server from the DUT's current limit.
 */
import { callRoute } from './http';
import type { StabilityJudgement } from '../../shared/protocol/stabilityLimit';

export type {
  StabilityAtTauWire,
  StabilityFigureWire,
  StabilityJudgement,
} from '../../shared/protocol/stabilityLimit';

/** GET /api/captures/:id/stability-limit: null when the DUT has no stability limit. */
export async function getCaptureStabilityLimit(
  captureId: number,
): Promise<StabilityJudgement | null> {
  return (await callRoute('GET /api/captures/:id/stability-limit', { id: captureId })).stability;
}
