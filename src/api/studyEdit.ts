/**
 * Editing a study's plan with history (issue 13): one typed call per endpoint. Bodies are the
 * shared zod types, answers the contract's response types.
 */
import { http } from './http';
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
  return http.patch(`/api/studies/${id}`, patch);
}

/** DELETE /api/studies/:id (409 `has-captures` / `has-record` once it holds evidence: archive instead). */
export function deleteStudy(id: number): Promise<void> {
  return http.delete(`/api/studies/${id}`);
}

/** PATCH /api/checkpoints/:id: name, exposure (per process kind), archived. */
export function updateCheckpoint(id: number, patch: CheckpointPatch): Promise<PlanCheckpoint> {
  return http.patch(`/api/checkpoints/${id}`, patch);
}

/** DELETE /api/checkpoints/:id (409 `has-captures` once captured). */
export function deleteCheckpoint(id: number): Promise<void> {
  return http.delete(`/api/checkpoints/${id}`);
}

/** POST /api/studies/:id/checkpoints/order: every checkpoint id once, in the new order. */
export async function reorderCheckpoints(
  studyId: number,
  ids: number[],
): Promise<PlanCheckpoint[]> {
  return (
    await http.post<{ checkpoints: PlanCheckpoint[] }>(
      `/api/studies/${studyId}/checkpoints/order`,
      { ids },
    )
  ).checkpoints;
}

/** Archives or restores a DUT (PATCH /api/duts/:id { archived }). */
export async function archiveDut(id: number, archived: boolean): Promise<PlanDut> {
  return (await http.patch<{ dut: PlanDut }>(`/api/duts/${id}`, { archived } satisfies DutPatch))
    .dut;
}

/** DELETE /api/duts/:id (409 `has-captures` once captured). */
export function deleteDut(id: number): Promise<void> {
  return http.delete(`/api/duts/${id}`);
}

/** POST /api/captures/:id/exclude { reason }: a lead leaves a capture out of the evidence. */
export function excludeCapture(id: number, reason: string): Promise<CaptureExclusionResult> {
  return http.post(`/api/captures/${id}/exclude`, { reason });
}

/** POST /api/captures/:id/include: takes an excluded capture back into the evidence. */
export function includeCapture(id: number): Promise<CaptureExclusionResult> {
  return http.post(`/api/captures/${id}/include`, {});
}

/** GET /api/studies/:id/cells: every capture of one DUT × checkpoint, with the one that represents it. */
export function getCellCaptures(
  studyId: number,
  dutId: number,
  checkpointId: number,
): Promise<CellCaptures> {
  return http.get(`/api/studies/${studyId}/cells?dutId=${dutId}&checkpointId=${checkpointId}`);
}

/** PUT /api/studies/:id/cells: the capture that represents a cell (null: back to the latest valid one). */
export function chooseCellCapture(studyId: number, choice: CellChoice): Promise<CellChoiceResult> {
  return http.put(`/api/studies/${studyId}/cells`, choice);
}
