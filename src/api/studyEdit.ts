/**
 * Editing a study's plan with history (issue 13): one typed call per endpoint. Bodies are the
 * shared zod types, answers the contract's response types.
 */
import { callRoute } from './http';
import type {
  CaptureExclusionResult,
  CellCaptures,
  CellChoice,
  CellChoiceResult,
  CheckpointPatch,
  StudyEditResult,
  StudyPatch,
} from '../../shared/protocol/studyEdit';
import type { DutPatch } from '../../shared/protocol/uncertainty';
import type { PlanCheckpoint, PlanDut } from './studyPlan';

export type { CellCaptures, CellChoice, CheckpointPatch, StudyPatch };

/** PATCH /api/studies/:id: title, process, description, archived. */
export function updateStudy(id: number, patch: StudyPatch): Promise<StudyEditResult> {
  return callRoute('PATCH /api/studies/:id', { id }, { body: patch });
}

/** DELETE /api/studies/:id (409 `has-captures` / `has-record` once it holds evidence: archive instead). */
export function deleteStudy(id: number): Promise<void> {
  return callRoute('DELETE /api/studies/:id', { id });
}

/** PATCH /api/checkpoints/:id: name, exposure (per process kind), archived. */
export function updateCheckpoint(id: number, patch: CheckpointPatch): Promise<PlanCheckpoint> {
  return callRoute('PATCH /api/checkpoints/:id', { id }, { body: patch });
}

/** DELETE /api/checkpoints/:id (409 `has-captures` once captured). */
export function deleteCheckpoint(id: number): Promise<void> {
  return callRoute('DELETE /api/checkpoints/:id', { id });
}

/** POST /api/studies/:id/checkpoints/order: every checkpoint id once, in the new order. */
export async function reorderCheckpoints(
  studyId: number,
  ids: number[],
): Promise<PlanCheckpoint[]> {
  const body = { ids };
  return (await callRoute('POST /api/studies/:id/checkpoints/order', { id: studyId }, { body }))
    .checkpoints;
}

/** Archives or restores a DUT (PATCH /api/duts/:id { archived }). */
export async function archiveDut(id: number, archived: boolean): Promise<PlanDut> {
  return (await callRoute('PATCH /api/duts/:id', { id }, { body: { archived } satisfies DutPatch }))
    .dut;
}

/** DELETE /api/duts/:id (409 `has-captures` once captured). */
export function deleteDut(id: number): Promise<void> {
  return callRoute('DELETE /api/duts/:id', { id });
}

/** POST /api/captures/:id/exclude { reason }: a lead leaves a capture out of the evidence. */
export function excludeCapture(id: number, reason: string): Promise<CaptureExclusionResult> {
  return callRoute('POST /api/captures/:id/exclude', { id }, { body: { reason } });
}

/** POST /api/captures/:id/include: takes an excluded capture back into the evidence. */
export function includeCapture(id: number): Promise<CaptureExclusionResult> {
  return callRoute('POST /api/captures/:id/include', { id });
}

/** GET /api/studies/:id/cells: every capture of one DUT × checkpoint, with the one that represents it. */
export function getCellCaptures(
  studyId: number,
  dutId: number,
  checkpointId: number,
): Promise<CellCaptures> {
  return callRoute(
    'GET /api/studies/:id/cells',
    { id: studyId },
    { query: { dutId, checkpointId } },
  );
}

/** PUT /api/studies/:id/cells: the capture that represents a cell (null: back to the latest valid one). */
export function chooseCellCapture(studyId: number, choice: CellChoice): Promise<CellChoiceResult> {
  return callRoute('PUT /api/studies/:id/cells', { id: studyId }, { body: choice });
}
